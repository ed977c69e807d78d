import { notFound, redirect } from "next/navigation";
import { LoopBackfill } from "@/app/_components/loop-backfill";
import { getLoopConfig } from "@/lib/data/admin/loops";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { roleAtLeast } from "@/lib/domain/types";
import { LoopSubpageTitle } from "../_components/loop-subpage-title";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Historian backfill");

export default async function BackfillPage({ params }: { params: Promise<{ loopId: string }> }) {
  const ctx = await requirePageContext();
  if (!roleAtLeast(ctx.role, "engineer")) redirect("/");
  const id = Number((await params).loopId);
  if (!Number.isInteger(id) || id <= 0) notFound();
  const cfg = await getLoopConfig(ctx, id);
  if (!cfg) notFound();
  return (
    <div className="flex flex-col gap-4">
      <LoopSubpageTitle title="Historian backfill" loopId={id} tag={cfg.tag} />
      <p className="max-w-3xl text-sm text-muted">
        Upload an export of this loop&apos;s past samples (columns t, sp, pv, mv and optionally mode and quality; t as ISO 8601 with a zone or epoch
        seconds; in time order). Each sample is checked like live telemetry, written to the history, and replayed through the loop&apos;s tracker so
        it starts live with a trained model. Times already in the history are refused, never written twice. Samples older than the per-second
        history keep only their 1-minute aggregates.
      </p>
      <LoopBackfill loopId={id} />
    </div>
  );
}
