import { redirect } from "next/navigation";
import { listSites } from "@/lib/data/admin/sites";
import { getContextOrNull } from "@/lib/auth/guard";
import { buildFleetHealth } from "@/lib/reports/fleet-health";
import { fleetHealthDocument } from "@/lib/reports/fleet-health-document";
import { periodOf, periodReportQuery, readTime } from "@/lib/reports/params";
import { PeriodFilter } from "../_components/period-filter";
import { ReportDocView } from "../_components/report-doc-view";
import { ReportTabs } from "../_components/report-tabs";

export const dynamic = "force-dynamic";
export const metadata = { title: "Fleet health · Rimguard" };

const day = (t: number) => new Date(t).toISOString().slice(0, 10);

export default async function FleetHealthPage({ searchParams }: { searchParams: Promise<Record<string, string | undefined>> }) {
  const ctx = await getContextOrNull();
  if (!ctx) redirect("/signin");
  const sp = await searchParams;
  const granularity = sp.granularity === "month" ? "month" : "week";
  const raw = Object.fromEntries(Object.entries(sp).filter(([k, v]) => v && k !== "granularity"));
  const parsed = periodReportQuery.safeParse(raw);
  const q = parsed.success ? parsed.data : { format: "json" as const };
  const now = readTime();
  const period = periodOf(q, now, 84);
  const sites = (await listSites(ctx)).filter((s) => !ctx.siteIds || ctx.siteIds.includes(s.id));
  const report = await buildFleetHealth(ctx, { ...period, siteId: q.siteId, areaId: q.areaId, kind: q.kind, granularity, siteIds: ctx.siteIds ?? null }, now);
  const doc = fleetHealthDocument(report);
  const params = new URLSearchParams({ from: day(period.from), to: day(period.to - 86_400_000), granularity });
  if (q.siteId) params.set("siteId", String(q.siteId));
  if (q.areaId) params.set("areaId", String(q.areaId));
  if (q.kind) params.set("kind", q.kind);
  return (
    <div className="flex flex-col gap-4">
      <ReportTabs active="/reports/fleet-health" />
      <div className="flex flex-wrap items-baseline justify-between gap-2">
        <div>
          <h1 className="text-xl font-semibold">{doc.title}</h1>
          <p className="num text-sm text-muted">{doc.period}</p>
        </div>
        <span className="flex gap-2 text-sm">
          <a href={`/reports/fleet-health?${new URLSearchParams({ ...Object.fromEntries(params), granularity: granularity === "week" ? "month" : "week" })}`}>by {granularity === "week" ? "month" : "week"}</a>
          <a href={`/api/reports/fleet-health?${params}&format=csv`} download className="rounded border border-line px-2 py-0.5">
            Download CSV
          </a>
          <a href={`/api/reports/fleet-health?${params}&format=pdf`} download className="rounded border border-line px-2 py-0.5">
            Download PDF
          </a>
        </span>
      </div>
      <PeriodFilter action="/reports/fleet-health" from={day(period.from)} to={day(period.to - 86_400_000)} siteId={q.siteId} areaId={q.areaId} kind={q.kind} sites={sites} />
      <ReportDocView doc={doc} />
    </div>
  );
}
