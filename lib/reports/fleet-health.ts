/**
 * Fleet health: the share of a tenant's loops (or one site's) by diagnosis label, per week or
 * month, from the daily summaries (so it outlives raw-data retention). A loop counts in a bucket
 * once, with the label of its latest judged day in that bucket, else `undetermined`; loops without
 * any summary in a bucket are not counted. Filters: site, area, kind (the same loops on screen, in
 * the CSV and the PDF: all three render this object). SQL in lib/data/reports.ts.
 */
import type { Sequelize } from "sequelize";
import { loadDaySummaries, reportLoops, siteAndAreaNames } from "@/lib/data/reports";
import { ValidationError } from "@/lib/domain/errors";
import { assertSiteVisible } from "@/lib/data/tenancy";
import { DIAGNOSIS_LABELS } from "./score";
import { utcDay } from "./summaries";

export type Granularity = "week" | "month";

export interface FleetBucket {
  /** "2026-W47" or "2026-11". */
  label: string;
  start: number;
  loops: number;
  counts: Record<string, number>;
}

export interface FleetHealth {
  tenantName: string;
  site: string | null;
  /** The filters applied (names for the title, null = all). */
  filter: { siteId: number | null; areaId: number | null; kind: string | null; site: string | null; area: string | null };
  from: number;
  to: number;
  granularity: Granularity;
  buckets: FleetBucket[];
  /** Per site, the latest bucket. */
  bySite: { site: string; loops: number; counts: Record<string, number> }[];
  generatedAt: number;
}

const DAY_MS = 86_400_000;

/** Monday 00:00 UTC of the ISO week containing t, and its ISO label. */
export function isoWeek(t: number): { start: number; label: string } {
  const d = new Date(Math.floor(t / DAY_MS) * DAY_MS);
  const dow = (d.getUTCDay() + 6) % 7;
  const start = d.getTime() - dow * DAY_MS;
  const thursday = new Date(start + 3 * DAY_MS);
  const year = thursday.getUTCFullYear();
  const week = Math.floor((thursday.getTime() - Date.UTC(year, 0, 1)) / (7 * DAY_MS)) + 1;
  return { start, label: `${year}-W${String(week).padStart(2, "0")}` };
}

function bucketOf(t: number, g: Granularity): { start: number; label: string } {
  if (g === "week") return isoWeek(t);
  const d = new Date(t);
  return { start: Date.UTC(d.getUTCFullYear(), d.getUTCMonth(), 1), label: `${d.getUTCFullYear()}-${String(d.getUTCMonth() + 1).padStart(2, "0")}` };
}

export async function buildFleetHealth(
  ctx: { tenantId: number; tenantName: string },
  f: { from: number; to: number; siteId?: number; areaId?: number; kind?: string; granularity: Granularity; siteIds?: number[] | null },
  now: number = Date.now(),
  db?: Sequelize,
): Promise<FleetHealth> {
  if (!(f.from < f.to) || f.to - f.from > 400 * DAY_MS) throw new ValidationError("The period must run forwards and cover at most 400 days.");
  if (f.siteId !== undefined) assertSiteVisible({ siteIds: f.siteIds ?? null }, f.siteId, "Site");
  const filter = { siteId: f.siteId, areaId: f.areaId, kind: f.kind, siteIds: f.siteIds };
  const loops = await reportLoops(ctx.tenantId, filter, db);
  const siteOf = new Map(loops.map((l) => [l.id, l.site]));
  const days = await loadDaySummaries(ctx, utcDay(f.from), utcDay(f.to), [...siteOf.keys()], db);
  // bucket -> loop -> [day, label] of the latest judged day (or undetermined)
  const perBucket = new Map<number, { label: string; loops: Map<number, { day: string; label: string }> }>();
  for (const d of days) {
    const b = bucketOf(Date.parse(`${d.day}T00:00:00Z`), f.granularity);
    const entry = perBucket.get(b.start) ?? perBucket.set(b.start, { label: b.label, loops: new Map() }).get(b.start)!;
    const cur = entry.loops.get(d.loopId);
    const judged = d.diagnosisLabel !== "undetermined";
    if (!cur || (judged && (cur.label === "undetermined" || d.day > cur.day))) entry.loops.set(d.loopId, { day: d.day, label: d.diagnosisLabel });
  }
  const empty = () => Object.fromEntries(DIAGNOSIS_LABELS.map((l) => [l, 0])) as Record<string, number>;
  const buckets: FleetBucket[] = [...perBucket.entries()]
    .sort((a, b) => a[0] - b[0])
    .map(([start, e]) => {
      const counts = empty();
      for (const { label } of e.loops.values()) counts[label] = (counts[label] ?? 0) + 1;
      return { label: e.label, start, loops: e.loops.size, counts };
    });
  const last = [...perBucket.entries()].sort((a, b) => a[0] - b[0]).at(-1);
  const bySiteMap = new Map<string, { loops: number; counts: Record<string, number> }>();
  for (const [loopId, { label }] of last?.[1].loops ?? []) {
    const site = siteOf.get(loopId) ?? "?";
    const e = bySiteMap.get(site) ?? bySiteMap.set(site, { loops: 0, counts: empty() }).get(site)!;
    e.loops++;
    e.counts[label] = (e.counts[label] ?? 0) + 1;
  }
  const names = await siteAndAreaNames(ctx.tenantId, f.siteId, f.areaId, db);
  return {
    tenantName: ctx.tenantName,
    site: names.site,
    filter: { siteId: f.siteId ?? null, areaId: f.areaId ?? null, kind: f.kind ?? null, ...names },
    from: f.from,
    to: f.to,
    granularity: f.granularity,
    buckets,
    bySite: [...bySiteMap.entries()].sort((a, b) => a[0].localeCompare(b[0])).map(([site, e]) => ({ site, ...e })),
    generatedAt: now,
  };
}
