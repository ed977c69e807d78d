import { LoopInventory } from "@/app/(console)/loops/_components/loop-inventory";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Loops");

export default async function LoopsPage() {
  const ctx = await requirePageContext();
  return <LoopInventory role={ctx.role} />;
}
