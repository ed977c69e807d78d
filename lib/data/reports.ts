/**
 * The reports' data layer: the per-loop daily summaries (loop_daily_summaries) and the loop
 * selection every period report filters by. Node only; plain typed objects out. The handover,
 * the operator log, the timeline and delivery have their own modules (reports-*.ts), re-exported here.
 *
 * A daily summary is built from the 1-minute history, the pole snapshots and the alarm occurrences
 * of one UTC day by three set-based statements (no row goes through Node). Radius and decay-ratio
 * figures come from estimates made while tracking only: a learning estimator's transients (often
 * beyond the unit circle) say nothing about the loop. The score uses the mean decay ratio and the
 * share of estimates beyond the rim, not the maxima: one bad estimate must not rank a loop (each
 * decay ratio is capped at 1 before averaging; beyond 1 the estimate counts in the unstable share).
 * Idempotent: running a day again replaces its figures. The diagnosis columns are written apart
 * (`writeDayDiagnoses`) from the live assessment's findings.
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { getSequelize } from "@/lib/data/db/sequelize";
import type { DaySummary } from "@/lib/reports/score";
import { utcDay, utcDayRange, type SummaryDiagnosis } from "@/lib/reports/summaries";

export * from "./reports-delivery";
export * from "./reports-handover";
export * from "./reports-log";
export * from "./reports-settings";

/** Saturated minute: MV mean within 0.5 % of the span of a limit (common practice; no source). */
const SAT_BAND = 0.005;

/** Build (or rebuild) every loop's summary of one UTC day; returns the number of loops summarised. */
export async function summarizeDay(day: string, db: Sequelize = getSequelize()): Promise<number> {
  const [from, to] = utcDayRange(day);
  const [, affected] = (await db.query(
    `INSERT INTO loop_daily_summaries (loop_id, day, tenant_id, site_id, minutes, radius_mean, radius_max, manual_share, saturation_share, service_factor, alarm_share, updated_at)
     SELECT s.loop_id, ?, l.tenant_id, l.site_id, COUNT(*), AVG(s.radius_mean), MAX(s.radius_max),
            AVG(COALESCE(s.manual_fraction, 0)),
            AVG(CASE WHEN s.mv_mean IS NULL THEN NULL
                     WHEN s.mv_mean >= COALESCE(l.mv_limit_hi, l.mv_hi) - ${SAT_BAND} * (l.mv_hi - l.mv_lo)
                       OR s.mv_mean <= COALESCE(l.mv_limit_lo, l.mv_lo) + ${SAT_BAND} * (l.mv_hi - l.mv_lo) THEN 1 ELSE 0 END),
            1 - AVG(COALESCE(s.manual_fraction, 0)), 0, UTC_TIMESTAMP(3)
       FROM samples_1m s JOIN loops l ON l.id = s.loop_id
      WHERE s.t >= ? AND s.t < ?
      GROUP BY s.loop_id, l.tenant_id, l.site_id
     ON DUPLICATE KEY UPDATE minutes = VALUES(minutes), radius_mean = VALUES(radius_mean), radius_max = VALUES(radius_max),
       manual_share = VALUES(manual_share), saturation_share = VALUES(saturation_share), service_factor = VALUES(service_factor),
       updated_at = VALUES(updated_at)`,
    { replacements: [day, from, to], type: QueryTypes.INSERT },
  )) as unknown as [unknown, number];
  await db.query(
    `UPDATE loop_daily_summaries d
       JOIN (SELECT p.loop_id, MAX(IF(p.tracker_state = 'tracking', p.decay_ratio, NULL)) AS dr,
                    MAX(IF(p.tracker_state = 'tracking', p.radius, NULL)) AS r,
                    AVG(IF(p.tracker_state = 'tracking', LEAST(p.decay_ratio, 1), NULL)) AS dr_mean,
                    AVG(IF(p.tracker_state = 'tracking' AND p.radius IS NOT NULL, p.radius >= 1, NULL)) AS unstable,
                    SUBSTRING_INDEX(GROUP_CONCAT(p.tracker_state ORDER BY p.t DESC), ',', 1) AS last_state
               FROM pole_snapshots p WHERE p.t >= ? AND p.t < ? GROUP BY p.loop_id) x ON x.loop_id = d.loop_id
        SET d.decay_ratio_max = x.dr, d.radius_max = x.r, d.decay_ratio_mean = x.dr_mean, d.unstable_share = x.unstable, d.tracker_state = x.last_state
      WHERE d.day = ?`,
    { replacements: [from, to, day] },
  );
  // Time with any operator alarm of the loop active, over the minutes observed (capped at 1).
  await db.query(
    `UPDATE loop_daily_summaries d
       JOIN (SELECT o.loop_id,
                    SUM(TIMESTAMPDIFF(MICROSECOND, GREATEST(o.started_at, ?), LEAST(COALESCE(o.ended_at, ?), ?))) / 1e6 AS active_s
               FROM alarm_occurrences o
              WHERE o.started_at < ? AND (o.ended_at IS NULL OR o.ended_at > ?) GROUP BY o.loop_id) a ON a.loop_id = d.loop_id
        SET d.alarm_share = LEAST(1, a.active_s / GREATEST(60, d.minutes * 60))
      WHERE d.day = ?`,
    { replacements: [new Date(from), new Date(to), new Date(to), new Date(to), new Date(from), day] },
  );
  return Number(affected ?? 0);
}

/** Loops that have a summary row for the day (the ones a diagnosis can be written to). */
export async function summarizedLoopIds(day: string, db: Sequelize = getSequelize()): Promise<number[]> {
  const rows = await db.query<{ loop_id: number }>("SELECT loop_id FROM loop_daily_summaries WHERE day = ?", { replacements: [day], type: QueryTypes.SELECT });
  return rows.map((r) => Number(r.loop_id));
}

/**
 * Write the diagnosis columns of existing summary rows of one day (a loop without a row that day
 * is skipped: no data, nothing to judge). Returns the number of rows written.
 */
export async function writeDayDiagnoses(day: string, diagnoses: readonly SummaryDiagnosis[], db: Sequelize = getSequelize()): Promise<number> {
  let written = 0;
  for (let i = 0; i < diagnoses.length; i += 500) {
    const chunk = diagnoses.slice(i, i + 500);
    if (!chunk.length) break;
    // One statement per chunk: a derived table of the findings joined to the day's rows.
    const values = chunk.map(() => "SELECT ? AS loop_id, ? AS label, ? AS confidence, ? AS osc, ? AS stiction, ? AS harris").join(" UNION ALL ");
    const [, meta] = (await db.query(
      `UPDATE loop_daily_summaries d JOIN (${values}) f ON f.loop_id = d.loop_id
          SET d.diagnosis_label = f.label, d.diagnosis_confidence = f.confidence, d.oscillation_index = f.osc,
              d.stiction_likelihood = f.stiction, d.harris_index = f.harris
        WHERE d.day = ?`,
      { replacements: [...chunk.flatMap((f) => [f.loopId, f.label, f.confidence, f.oscillationIndex, f.stictionLikelihood, f.harrisIndex]), day] },
    )) as unknown as [unknown, { affectedRows?: number } | number];
    written += typeof meta === "number" ? meta : (meta?.affectedRows ?? 0);
  }
  return written;
}

interface RawDay {
  loop_id: number;
  day: string | Date;
  minutes: number;
  radius_mean: number | null;
  radius_max: number | null;
  decay_ratio_max: number | null;
  decay_ratio_mean: number | null;
  unstable_share: number | null;
  alarm_share: number | null;
  manual_share: number | null;
  saturation_share: number | null;
  service_factor: number | null;
  tracker_state: string | null;
  diagnosis_label: string;
  diagnosis_confidence: number | null;
  oscillation_index: number | null;
  stiction_likelihood: number | null;
  harris_index: number | null;
}

const n = (v: unknown) => (v == null ? null : Number(v));

/** Summaries of a tenant's loops for days in [fromDay, toDay). */
export async function loadDaySummaries(
  ctx: { tenantId: number },
  fromDay: string,
  toDay: string,
  loopIds: number[] | null,
  db: Sequelize = getSequelize(),
): Promise<DaySummary[]> {
  const rows = await db.query<RawDay>(
    `SELECT loop_id, day, minutes, radius_mean, radius_max, decay_ratio_max, decay_ratio_mean, unstable_share, alarm_share, manual_share, saturation_share, service_factor,
            tracker_state, diagnosis_label, diagnosis_confidence, oscillation_index, stiction_likelihood, harris_index
       FROM loop_daily_summaries WHERE tenant_id = ? AND day >= ? AND day < ? ${loopIds ? "AND loop_id IN (?)" : ""}`,
    { replacements: [ctx.tenantId, fromDay, toDay, ...(loopIds ? [loopIds.length ? loopIds : [0]] : [])], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({
    loopId: Number(r.loop_id),
    day: typeof r.day === "string" ? r.day.slice(0, 10) : utcDay(r.day.getTime()),
    minutes: Number(r.minutes),
    radiusMean: n(r.radius_mean),
    radiusMax: n(r.radius_max),
    decayRatioMax: n(r.decay_ratio_max),
    decayRatioMean: n(r.decay_ratio_mean),
    unstableShare: n(r.unstable_share),
    alarmShare: n(r.alarm_share),
    manualShare: n(r.manual_share),
    saturationShare: n(r.saturation_share),
    serviceFactor: n(r.service_factor),
    trackerState: r.tracker_state,
    diagnosisLabel: r.diagnosis_label,
    diagnosisConfidence: n(r.diagnosis_confidence),
    oscillationIndex: n(r.oscillation_index),
    stictionLikelihood: n(r.stiction_likelihood),
    harrisIndex: n(r.harris_index),
  }));
}

/** Filters of the period reports (worst loops, fleet health). */
export interface ReportLoopFilter {
  siteId?: number;
  areaId?: number;
  kind?: string;
  /** Site scope of the caller (null/undefined: every site). */
  siteIds?: number[] | null;
  /** Only loops that are enabled (the worst-loops ranking). */
  enabledOnly?: boolean;
}

export interface ReportLoop {
  id: number;
  tag: string;
  description: string;
  kind: string;
  criticality: number;
  site: string;
  area: string | null;
}

/** A tenant's loops under a report's filters, with their site and area names. */
export async function reportLoops(tenantId: number, f: ReportLoopFilter, db: Sequelize = getSequelize()): Promise<ReportLoop[]> {
  const where = ["l.tenant_id = ?"];
  const args: unknown[] = [tenantId];
  if (f.enabledOnly) where.push("l.enabled = 1");
  const add = (sql: string, v: unknown) => {
    where.push(sql);
    args.push(v);
  };
  if (f.siteId !== undefined) add("l.site_id = ?", f.siteId);
  if (f.areaId !== undefined) add("l.area_id = ?", f.areaId);
  if (f.kind !== undefined) add("l.kind = ?", f.kind);
  if (f.siteIds) add("l.site_id IN (?)", f.siteIds.length ? f.siteIds : [0]);
  const rows = await db.query<{ id: number; tag: string; description: string; kind: string; criticality: number; site: string; area: string | null }>(
    `SELECT l.id, l.tag, l.description, l.kind, l.criticality, s.name AS site, a.name AS area
       FROM loops l JOIN sites s ON s.id = l.site_id LEFT JOIN areas a ON a.id = l.area_id WHERE ${where.join(" AND ")}`,
    { replacements: args, type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({ ...r, id: Number(r.id), criticality: Number(r.criticality) }));
}

/** A work-list item still open or in work, as a period report shows it beside its loop. */
export interface OpenWorkItem {
  loopId: number;
  label: string;
  status: string;
  owner: string | null;
  openedAt: Date;
}

/** The tenant's work-list items not closed on the given loops, oldest first per loop. */
export async function openWorkItemsByLoop(tenantId: number, loopIds: number[], db: Sequelize = getSequelize()): Promise<Map<number, OpenWorkItem[]>> {
  const out = new Map<number, OpenWorkItem[]>();
  if (!loopIds.length) return out;
  const rows = await db.query<{ loop_id: number; label: string; status: string; owner: string | null; opened_at: Date | string }>(
    `SELECT w.loop_id, w.label, w.status, u.name AS owner, w.opened_at
       FROM work_items w LEFT JOIN users u ON u.id = w.owner_id
      WHERE w.tenant_id = ? AND w.status <> 'closed' AND w.loop_id IN (?)
      ORDER BY w.opened_at, w.id`,
    { replacements: [tenantId, loopIds], type: QueryTypes.SELECT },
  );
  for (const r of rows) {
    const id = Number(r.loop_id);
    const item: OpenWorkItem = { loopId: id, label: r.label, status: r.status, owner: r.owner, openedAt: new Date(r.opened_at) };
    (out.get(id) ?? out.set(id, []).get(id)!).push(item);
  }
  return out;
}

/** Names of a site and an area of the tenant (for a report's title when no loop matches). */
export async function siteAndAreaNames(tenantId: number, siteId: number | undefined, areaId: number | undefined, db: Sequelize = getSequelize()): Promise<{ site: string | null; area: string | null }> {
  const [s] = siteId === undefined ? [] : await db.query<{ name: string }>("SELECT name FROM sites WHERE id = ? AND tenant_id = ?", { replacements: [siteId, tenantId], type: QueryTypes.SELECT });
  const [a] = areaId === undefined ? [] : await db.query<{ name: string }>("SELECT name FROM areas WHERE id = ? AND tenant_id = ?", { replacements: [areaId, tenantId], type: QueryTypes.SELECT });
  return { site: s?.name ?? null, area: a?.name ?? null };
}
