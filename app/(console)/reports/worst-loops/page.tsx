import { redirect } from "next/navigation";
import { listSites } from "@/lib/data/admin/sites";
import { getContextOrNull } from "@/lib/auth/guard";
import { periodOf, periodReportQuery, readTime } from "@/lib/reports/params";
import { buildWorstLoops } from "@/lib/reports/worst-loops";
import { worstLoopsDocument } from "@/lib/reports/worst-loops-document";
import { PeriodFilter } from "../_components/period-filter";
import { ReportDocView } from "../_components/report-doc-view";
import { ReportTabs } from "../_components/report-tabs";

export const dynamic = "force-dynamic";
export const metadata = { title: "Worst loops · Rimguard" };

const day = (t: number) => new Date(t).toISOString().slice(0, 10);

export default async function WorstLoopsPage({ searchParams }: { searchParams: Promise<Record<string, string | undefined>> }) {
  const ctx = await getContextOrNull();
  if (!ctx) redirect("/signin");
  const raw = Object.fromEntries(Object.entries(await searchParams).filter(([, v]) => v !== undefined && v !== ""));
  const parsed = periodReportQuery.safeParse(raw);
  const q = parsed.success ? parsed.data : { format: "json" as const };
  const now = readTime();
  const period = periodOf(q, now);
  const sites = (await listSites(ctx)).filter((s) => !ctx.siteIds || ctx.siteIds.includes(s.id));
  const report = await buildWorstLoops(ctx, { ...period, siteId: q.siteId, areaId: q.areaId, kind: q.kind, siteIds: ctx.siteIds ?? null }, now);
  const doc = worstLoopsDocument(report);
  const params = new URLSearchParams({ from: day(period.from), to: day(period.to - 86_400_000) });
  if (q.siteId) params.set("siteId", String(q.siteId));
  if (q.areaId) params.set("areaId", String(q.areaId));
  if (q.kind) params.set("kind", q.kind);
  return (
    <div className="flex flex-col gap-4">
      <ReportTabs active="/reports/worst-loops" />
      <div className="flex flex-wrap items-baseline justify-between gap-2">
        <div>
          <h1 className="text-xl font-semibold">{doc.title}</h1>
          <p className="num text-sm text-muted">{doc.period}</p>
        </div>
        <span className="flex gap-2 text-sm">
          <a href={`/api/reports/worst-loops?${params}&format=csv`} download className="rounded border border-line px-2 py-0.5">
            Download CSV (all loops)
          </a>
          <a href={`/api/reports/worst-loops?${params}&format=pdf`} download className="rounded border border-line px-2 py-0.5">
            Download PDF (top 50)
          </a>
        </span>
      </div>
      {!parsed.success && <p role="alert" className="text-sm text-urgent">Some filters were not understood and were left out: {parsed.error.issues.map((i) => i.path.join(".")).join(", ")}.</p>}
      <PeriodFilter action="/reports/worst-loops" from={day(period.from)} to={day(period.to - 86_400_000)} siteId={q.siteId} areaId={q.areaId} kind={q.kind} sites={sites} />
      <ReportDocView doc={doc} />
    </div>
  );
}
