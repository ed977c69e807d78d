import { listSites } from "@/lib/data/admin/sites";
import type { TenantContext } from "@/lib/domain/types";
import { periodOf, periodReportQuery, readTime } from "@/lib/reports/params";

const day = (t: number) => new Date(t).toISOString().slice(0, 10);

/**
 * What a period report page reads from its query: the filters (those not understood are left
 * out and listed in `parsed`), the period (`defaultDays` back from tomorrow when none is given),
 * the caller's sites, and the query string of its downloads. `own` are the page's own parameters
 * (kept out of the period filters, put into the download query after from/to).
 */
export async function readPeriodPage(ctx: TenantContext, sp: Record<string, string | undefined>, defaultDays?: number, own: Record<string, string> = {}) {
  const raw = Object.fromEntries(Object.entries(sp).filter(([k, v]) => v !== undefined && v !== "" && !Object.hasOwn(own, k)));
  const parsed = periodReportQuery.safeParse(raw);
  const q = parsed.success ? parsed.data : { format: "json" as const };
  const now = readTime();
  const period = periodOf(q, now, defaultDays);
  const sites = (await listSites(ctx)).filter((s) => !ctx.siteIds || ctx.siteIds.includes(s.id));
  const from = day(period.from);
  const to = day(period.to - 86_400_000);
  const params = new URLSearchParams({ from, to, ...own });
  if (q.siteId) params.set("siteId", String(q.siteId));
  if (q.areaId) params.set("areaId", String(q.areaId));
  if (q.kind) params.set("kind", q.kind);
  return { parsed, q, now, period, sites, from, to, params };
}
