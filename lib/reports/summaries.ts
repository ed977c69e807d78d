/**
 * The per-loop daily summary (loop_daily_summaries), built from the 1-minute history, the pole
 * snapshots and the alarm occurrences of one UTC day, so the reports need neither raw data nor its
 * retention. Three set-based statements per day (no row goes through Node). Radius and decay-ratio
 * figures come from estimates made while tracking only: a learning estimator's transients (often
 * beyond the unit circle) say nothing about the loop. The score uses the mean decay ratio and the
 * share of estimates beyond the rim, not the maxima: one bad estimate must not rank a loop (each
 * decay ratio is capped at 1 before averaging; beyond 1 the estimate counts in the unstable share). Idempotent: running a
 * day again replaces its figures. The diagnosis columns are left as they are (`undetermined`
 * until the routine-data assessment writes them).
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { getSequelize } from "@/lib/db/sequelize";
import type { DaySummary } from "./score";

const DAY_MS = 86_400_000;

/** "2026-11-30" -> [start, end) epoch ms. */
export function utcDayRange(day: string): [number, number] {
  const start = Date.parse(`${day}T00:00:00Z`);
  if (!Number.isFinite(start)) throw new Error(`"${day}" is not a date YYYY-MM-DD.`);
  return [start, start + DAY_MS];
}

export function utcDay(t: number): string {
  return new Date(t).toISOString().slice(0, 10);
}

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
