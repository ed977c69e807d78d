import { redirect } from "next/navigation";
import { LoopInventory } from "@/app/(console)/loops/_components/loop-inventory";
import { getContextOrNull } from "@/lib/auth/guard";

export const dynamic = "force-dynamic";
export const metadata = { title: "Loops · Rimguard" };

export default async function LoopsPage() {
  const ctx = await getContextOrNull();
  if (!ctx) redirect("/signin");
  return <LoopInventory role={ctx.role} />;
}
