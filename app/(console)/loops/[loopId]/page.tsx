import { notFound, redirect } from "next/navigation";
import { LoopDetail } from "@/app/_components/loop-detail";
import { getContextOrNull } from "@/lib/auth/guard";

export const dynamic = "force-dynamic";
export const metadata = { title: "Loop · Rimguard" };

export default async function LoopPage({ params }: { params: Promise<{ loopId: string }> }) {
  const ctx = await getContextOrNull();
  if (!ctx) redirect("/signin");
  const { loopId } = await params;
  const id = Number(loopId);
  if (!Number.isInteger(id) || id <= 0) notFound();
  return <LoopDetail loopId={id} role={ctx.role} />;
}
