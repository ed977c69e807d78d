import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { buildWorstLoops } from "@/lib/reports/worst-loops";
import { worstLoopsDocument } from "@/lib/reports/worst-loops-document";
import { PeriodFilter } from "../_components/period-filter";
import { readPeriodPage } from "../_components/period-page";
import { ReportDocView } from "../_components/report-doc-view";
import { ReportDownloads } from "../_components/report-downloads";
import { ReportHeading } from "../_components/report-heading";
import { ReportTabs } from "../_components/report-tabs";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Worst loops");

export default async function WorstLoopsPage({ searchParams }: { searchParams: Promise<Record<string, string | undefined>> }) {
  const ctx = await requirePageContext();
  const { parsed, q, now, period, sites, from, to, params } = await readPeriodPage(ctx, await searchParams);
  const report = await buildWorstLoops(ctx, { ...period, siteId: q.siteId, areaId: q.areaId, kind: q.kind, siteIds: ctx.siteIds ?? null }, now);
  const doc = worstLoopsDocument(report);
  return (
    <div className="flex flex-col gap-4">
      <ReportTabs active="/reports/worst-loops" />
      <ReportHeading title={doc.title} period={doc.period}>
        <ReportDownloads endpoint="/api/reports/worst-loops" params={params} csvLabel="Download CSV (all loops)" pdfLabel="Download PDF (top 50)" />
      </ReportHeading>
      {!parsed.success && <p role="alert" className="text-sm text-urgent">Some filters were not understood and were left out: {parsed.error.issues.map((i) => i.path.join(".")).join(", ")}.</p>}
      <PeriodFilter action="/reports/worst-loops" from={from} to={to} siteId={q.siteId} areaId={q.areaId} kind={q.kind} sites={sites} />
      <ReportDocView doc={doc} />
    </div>
  );
}
