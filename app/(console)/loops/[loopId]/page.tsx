import { notFound } from "next/navigation";
import { LoopDetail } from "@/app/(console)/loops/[loopId]/_components/loop-detail";
import { FindingEvidencePanel } from "@/app/_components/finding-evidence";
import { isRangeKey } from "@/lib/client/ranges";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { loopOwner } from "@/lib/data/loops";
import { siteVisible } from "@/lib/data/tenancy";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Loop");

export default async function LoopPage({ params, searchParams }: { params: Promise<{ loopId: string }>; searchParams: Promise<{ range?: string }> }) {
  const ctx = await requirePageContext();
  const { loopId } = await params;
  const id = Number(loopId);
  if (!Number.isInteger(id) || id <= 0 || id > Number.MAX_SAFE_INTEGER) notFound();
  // Another tenant's loop is a 404, exactly like a loop that does not exist (as the API answers).
  const owner = await loopOwner(id);
  if (!owner || owner.tenantId !== ctx.tenantId || !siteVisible(ctx, owner.siteId)) notFound();
  const { range } = await searchParams;
  const initialRange = isRangeKey(range) ? range : "1h";
  return <><LoopDetail loopId={id} role={ctx.role} initialRange={initialRange} /><FindingEvidencePanel loopId={id} /></>;
}
