import { notFound } from "next/navigation";
import { getLoopConfig } from "@/lib/data/admin/loops";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { listExportAssessments, MAX_EXPORT_ROWS } from "@/lib/export-assessments/service";
import { roleAtLeast } from "@/lib/domain/types";
import { ExportsView } from "./_components/exports-view";
import { LoopSubpageTitle } from "../_components/loop-subpage-title";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Assess an export");

export default async function ExportsPage({ params, searchParams }: { params: Promise<{ loopId: string }>; searchParams: Promise<{ export?: string }> }) {
  const ctx = await requirePageContext();
  const id = Number((await params).loopId);
  if (!Number.isInteger(id) || id <= 0) notFound();
  const cfg = await getLoopConfig(ctx, id);
  if (!cfg) notFound();
  const exports = await listExportAssessments(ctx, id);
  const wanted = Number((await searchParams).export);
  const selected = exports.find((t) => t.id === wanted)?.id ?? exports[0]?.id ?? null;
  return (
    <div className="flex flex-col gap-4">
      <LoopSubpageTitle title="Assess a historian export" loopId={id} tag={cfg.tag} />
      <p className="max-w-3xl text-sm text-muted">
        Export a few hours or days of this loop&apos;s SP, PV, MV and mode from the plant historian and upload it: Rimguard judges it from the
        routine data alone — oscillation, sticking valve, sluggish or aggressive tuning, outside disturbance, saturation, sensor fault,
        manual — with the loop&apos;s stored settings (range, tuning, dead time), the same way as the live assessment and{" "}
        <span className="font-mono">npm run assess</span>. Each result stays in the loop&apos;s record. At most {MAX_EXPORT_ROWS.toLocaleString("en-GB")} rows.
      </p>
      <ExportsView loopId={id} canUpload={roleAtLeast(ctx.role, "engineer")} initial={exports} initialSelected={selected} />
    </div>
  );
}
