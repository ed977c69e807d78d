import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { buildFleetHealth } from "@/lib/reports/fleet-health";
import { fleetHealthDocument } from "@/lib/reports/fleet-health-document";
import { PeriodFilter } from "../_components/period-filter";
import { readPeriodPage } from "../_components/period-page";
import { ReportDocView } from "../_components/report-doc-view";
import { ReportDownloads } from "../_components/report-downloads";
import { ReportHeading } from "../_components/report-heading";
import { ReportTabs } from "../_components/report-tabs";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Fleet health");

export default async function FleetHealthPage({ searchParams }: { searchParams: Promise<Record<string, string | undefined>> }) {
  const ctx = await requirePageContext();
  const sp = await searchParams;
  const granularity = sp.granularity === "month" ? "month" : "week";
  const { q, now, period, sites, from, to, params } = await readPeriodPage(ctx, sp, 84, { granularity });
  const report = await buildFleetHealth(ctx, { ...period, siteId: q.siteId, areaId: q.areaId, kind: q.kind, granularity, siteIds: ctx.siteIds ?? null }, now);
  const doc = fleetHealthDocument(report);
  return (
    <div className="flex flex-col gap-4">
      <ReportTabs active="/reports/fleet-health" />
      <ReportHeading title={doc.title} period={doc.period}>
        <ReportDownloads endpoint="/api/reports/fleet-health" params={params}>
          <span className="flex" role="group" aria-label="Period of each bucket">
            {(["week", "month"] as const).map((g) => (
              <a
                key={g}
                href={`/reports/fleet-health?${new URLSearchParams({ ...Object.fromEntries(params), granularity: g })}`}
                aria-current={g === granularity ? "true" : undefined}
                className={`border border-line px-2 py-0.5 first:rounded-l last:rounded-r ${g === granularity ? "bg-raised font-semibold" : "text-muted"}`}
              >
                by {g}
              </a>
            ))}
          </span>
        </ReportDownloads>
      </ReportHeading>
      <PeriodFilter action="/reports/fleet-health" from={from} to={to} siteId={q.siteId} areaId={q.areaId} kind={q.kind} sites={sites} />
      <ReportDocView doc={doc} />
    </div>
  );
}
