import { redirect } from "next/navigation";
import { getContextOrNull } from "@/lib/auth/guard";
import { buildWorstLoops } from "@/lib/reports/worst-loops";
import { worstLoopsDocument } from "@/lib/reports/worst-loops-document";
import { PeriodFilter } from "../_components/period-filter";
import { readPeriodPage } from "../_components/period-page";
import { ReportDocView } from "../_components/report-doc-view";
import { ReportHeading } from "../_components/report-heading";
import { ReportTabs } from "../_components/report-tabs";

export const dynamic = "force-dynamic";
export const metadata = { title: "Worst loops · Rimguard" };

export default async function WorstLoopsPage({ searchParams }: { searchParams: Promise<Record<string, string | undefined>> }) {
  const ctx = await getContextOrNull();
  if (!ctx) redirect("/signin");
  const { parsed, q, now, period, sites, from, to, params } = await readPeriodPage(ctx, await searchParams);
  const report = await buildWorstLoops(ctx, { ...period, siteId: q.siteId, areaId: q.areaId, kind: q.kind, siteIds: ctx.siteIds ?? null }, now);
  const doc = worstLoopsDocument(report);
  return (
    <div className="flex flex-col gap-4">
      <ReportTabs active="/reports/worst-loops" />
      <ReportHeading title={doc.title} period={doc.period}>
        <span className="flex gap-2 text-sm">
          <a href={`/api/reports/worst-loops?${params}&format=csv`} download className="rounded border border-line px-2 py-0.5">
            Download CSV (all loops)
          </a>
          <a href={`/api/reports/worst-loops?${params}&format=pdf`} download className="rounded border border-line px-2 py-0.5">
            Download PDF (top 50)
          </a>
        </span>
      </ReportHeading>
      {!parsed.success && <p role="alert" className="text-sm text-urgent">Some filters were not understood and were left out: {parsed.error.issues.map((i) => i.path.join(".")).join(", ")}.</p>}
      <PeriodFilter action="/reports/worst-loops" from={from} to={to} siteId={q.siteId} areaId={q.areaId} kind={q.kind} sites={sites} />
      <ReportDocView doc={doc} />
    </div>
  );
}
