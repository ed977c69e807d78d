import { notFound, redirect } from "next/navigation";
import { LoopDetail } from "@/app/_components/loop-detail";
import { isRangeKey } from "@/lib/client/ranges";
import { getContextOrNull } from "@/lib/auth/guard";

export const dynamic = "force-dynamic";
export const metadata = { title: "Loop · Rimguard" };

export default async function LoopPage({ params, searchParams }: { params: Promise<{ loopId: string }>; searchParams: Promise<{ range?: string }> }) {
  const ctx = await getContextOrNull();
  if (!ctx) redirect("/signin");
  const { loopId } = await params;
  const id = Number(loopId);
  if (!Number.isInteger(id) || id <= 0) notFound();
  const { range } = await searchParams;
  const initialRange = isRangeKey(range) ? range : "1h";
  return <LoopDetail loopId={id} role={ctx.role} initialRange={initialRange} />;
}
