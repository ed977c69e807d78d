/**
 * A loop's history for charts: server-side down-sampling to at most `maxPoints` buckets, each
 * keeping the min and max of its rows (so peaks and dips survive at any zoom) and the
 * sample-weighted mean. Reads the per-second tier when the whole range is inside its retention
 * window, otherwise the 1-minute tier; pole snapshots are thinned to one per bucket (the last).
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { z } from "zod";
import { getConfig } from "@/lib/config";
import { getSequelize } from "@/lib/data/db/sequelize";
import { siteScopeSql } from "@/lib/data/tenancy";
import type { Complex } from "@/lib/control/types";
import type { PoleDto, TenantContext, TrackerState } from "@/lib/domain/types";

const MAX_SPAN_MS = 400 * 86_400_000;

/** A time as epoch milliseconds or an ISO 8601 string. */
const timeParam = z.string().transform((s, c) => {
  const t = /^\d{1,16}$/.test(s) ? Number(s) : Date.parse(s);
  if (!Number.isFinite(t) || t < 0) {
    c.addIssue({ code: "custom", message: "must be an ISO 8601 time or epoch milliseconds" });
    return z.NEVER;
  }
  return t;
});

/** Query parameters of GET /api/loops/[loopId]/history. */
export const historySchema = z
  .object({
    from: timeParam,
    to: timeParam,
    maxPoints: z.coerce.number().int().min(10).max(10_000).default(1000),
    tier: z.enum(["auto", "1s", "1m"]).default("auto"),
    /** `rows` (default): one object per bucket; `columns`: one array per statistic (see `historyColumns`). */
    shape: z.enum(["rows", "columns"]).default("rows"),
  })
  .refine((q) => q.to > q.from, { message: "to must be after from", path: ["to"] })
  .refine((q) => q.to - q.from <= MAX_SPAN_MS, { message: "the range may span at most 400 days", path: ["from"] });

export type Stat = { min: number | null; mean: number | null; max: number | null };

export interface HistoryPoint {
  /** Start of the bucket (ISO 8601). */
  t: string;
  sp: Stat;
  pv: Stat;
  mv: Stat;
  radius: Stat | null;
  /** Good samples in the bucket (the statistics are made of these). */
  n: number;
  /** Samples of bad / uncertain quality in the bucket (in no statistic: evidence of a sensor fault); always set by `getLoopHistory`. */
  bad?: number;
  uncertain?: number;
}

export interface HistorySnapshot {
  t: string;
  radius: number | null;
  decayRatio: number | null;
  trackerState: TrackerState;
  poles: { model: (PoleDto | Complex)[]; data: (PoleDto | Complex)[] };
}

export interface LoopHistory {
  loopId: number;
  from: string;
  to: string;
  tier: "1s" | "1m";
  bucketMs: number;
  points: HistoryPoint[];
  poles: HistorySnapshot[];
}

type Num = number | string | null;
const n = (v: Num): number | null => (v === null ? null : Number.isFinite(Number(v)) ? Number(v) : null);
const stat = (min: Num, mean: Num, max: Num): Stat => ({ min: n(min), mean: n(mean), max: n(max) });

/** Bucket width: a multiple of the tier's row period such that the range gives <= maxPoints buckets. */
export function bucketWidth(spanMs: number, maxPoints: number, tierMs: number): number {
  // Buckets are aligned to the epoch, so a range can touch one more bucket than span / width.
  const raw = spanMs / Math.max(1, maxPoints - 1);
  return Math.max(tierMs, Math.ceil(raw / tierMs) * tierMs);
}

interface HistoryOptions {
  sequelize?: Sequelize;
  now?: number;
  tier?: "auto" | "1s" | "1m";
  secondRetentionH?: number;
  /** `rows` (default) gives `LoopHistory`, `columns` gives `LoopHistoryColumns`. */
  shape?: "rows" | "columns";
}

/** The answer for a shape: rows unless `shape` is `columns`. */
export type HistoryAnswer<S extends "rows" | "columns"> = S extends "columns" ? LoopHistoryColumns : LoopHistory;

export async function getLoopHistory<S extends "rows" | "columns" = "rows">(
  ctx: Pick<TenantContext, "tenantId" | "siteIds">,
  loopId: number,
  from: number,
  to: number,
  maxPoints: number,
  opts: HistoryOptions & { shape?: S } = {},
): Promise<HistoryAnswer<S> | null> {
  if (!Number.isInteger(ctx.tenantId) || ctx.tenantId <= 0) throw new Error("History queries need a tenant context with a valid tenantId.");
  if (!Number.isSafeInteger(loopId) || loopId <= 0) return null;
  if (!(to > from) || !(maxPoints >= 1)) throw new RangeError("getLoopHistory: need from < to and maxPoints >= 1.");
  const sequelize = opts.sequelize ?? getSequelize();
  const scope = siteScopeSql(ctx, "site_id");
  const owned = await sequelize.query<{ id: number }>(`SELECT id FROM loops WHERE id = ? AND tenant_id = ?${scope.sql}`, {
    replacements: [loopId, ctx.tenantId, ...scope.args],
    type: QueryTypes.SELECT,
  });
  if (owned.length === 0) return null;

  const now = opts.now ?? Date.now();
  const retentionMs = (opts.secondRetentionH ?? getConfig().HISTORY_SECOND_RETENTION_H) * 3_600_000;
  const tier = opts.tier && opts.tier !== "auto" ? opts.tier : from >= now - retentionMs ? "1s" : "1m";
  const tierMs = tier === "1s" ? 1_000 : 60_000;
  const bucketMs = bucketWidth(to - from, maxPoints, tierMs);
  const table = tier === "1s" ? "samples_1s" : "samples_1m";
  const w = (c: string) => `SUM(${c}_mean * n) / NULLIF(SUM(CASE WHEN ${c}_mean IS NULL THEN 0 ELSE n END), 0)`;
  const radiusCols =
    tier === "1m" ? ", MIN(radius_min) AS r_min, AVG(radius_mean) AS r_mean, MAX(radius_max) AS r_max" : ", NULL AS r_min, NULL AS r_mean, NULL AS r_max";
  const rows = await sequelize.query<Record<string, Num>>(
    `SELECT (t DIV ${bucketMs}) * ${bucketMs} AS b,
            MIN(sp_min) AS sp_min, ${w("sp")} AS sp_mean, MAX(sp_max) AS sp_max,
            MIN(pv_min) AS pv_min, ${w("pv")} AS pv_mean, MAX(pv_max) AS pv_max,
            MIN(mv_min) AS mv_min, ${w("mv")} AS mv_mean, MAX(mv_max) AS mv_max,
            SUM(n) AS n, SUM(bad_n) AS bad, SUM(uncertain_n) AS uncertain ${radiusCols}
       FROM ${table}
      WHERE loop_id = ? AND t >= ? AND t < ?
      GROUP BY b ORDER BY b`,
    { replacements: [loopId, from, to], type: QueryTypes.SELECT },
  );

  // Per-second rows carry no radius: take it from the pole snapshots of the same bucket.
  const radiusByBucket = new Map<number, Stat>();
  if (tier === "1s") {
    const rr = await sequelize.query<{ b: Num; r_min: Num; r_mean: Num; r_max: Num }>(
      `SELECT (t DIV ${bucketMs}) * ${bucketMs} AS b, MIN(radius) AS r_min, AVG(radius) AS r_mean, MAX(radius) AS r_max
         FROM pole_snapshots WHERE loop_id = ? AND t >= ? AND t < ? AND radius IS NOT NULL GROUP BY b`,
      { replacements: [loopId, from, to], type: QueryTypes.SELECT },
    );
    for (const r of rr) radiusByBucket.set(Number(r.b), stat(r.r_min, r.r_mean, r.r_max));
  }
  // A snapshot is written on change and at least once a minute while the tracker updates, so a
  // bucket without one holds the estimate in force: the last snapshot at or before it, if that is
  // at most RADIUS_HOLD_MS old (an older one means the tracker stopped: the trend shows a gap).
  const held =
    tier === "1s" && rows.length > 0
      ? await sequelize.query<{ t: Num; radius: Num }>(
          `SELECT t, radius FROM pole_snapshots WHERE loop_id = ? AND t >= ? AND t < ? AND radius IS NOT NULL ORDER BY t`,
          { replacements: [loopId, from - RADIUS_HOLD_MS, to], type: QueryTypes.SELECT },
        )
      : [];
  let hi = 0;
  let last = null as { t: number; radius: number } | null;
  const heldRadius = (bucketStart: number): Stat | null => {
    while (hi < held.length && Number(held[hi]!.t) <= bucketStart) {
      last = { t: Number(held[hi]!.t), radius: Number(held[hi]!.radius) };
      hi++;
    }
    return last && bucketStart - last.t <= RADIUS_HOLD_MS ? { min: last.radius, mean: last.radius, max: last.radius } : null;
  };

  const buckets: Bucket[] = rows.map((r) => {
    const b = Number(r.b);
    const radius =
      tier === "1m" ? (r.r_min === null && r.r_max === null ? null : stat(r.r_min ?? null, r.r_mean ?? null, r.r_max ?? null)) : (radiusByBucket.get(b) ?? heldRadius(b));
    return {
      t: b,
      sp: stat(r.sp_min ?? null, r.sp_mean ?? null, r.sp_max ?? null),
      pv: stat(r.pv_min ?? null, r.pv_mean ?? null, r.pv_max ?? null),
      mv: stat(r.mv_min ?? null, r.mv_mean ?? null, r.mv_max ?? null),
      radius,
      n: Number(r.n ?? 0),
      bad: Number(r.bad ?? 0),
      uncertain: Number(r.uncertain ?? 0),
    };
  });

  const snaps = await sequelize.query<{ t: Num; radius: Num; decay_ratio: Num; poles: string | null; tracker_state: TrackerState }>(
    "SELECT t, radius, decay_ratio, poles, tracker_state FROM pole_snapshots WHERE loop_id = ? AND t >= ? AND t < ? ORDER BY t LIMIT 50000",
    { replacements: [loopId, from, to], type: QueryTypes.SELECT },
  );
  const lastPerBucket = new Map<number, (typeof snaps)[number]>();
  for (const s of snaps) lastPerBucket.set(Math.floor(Number(s.t) / bucketMs), s);
  const poles: HistorySnapshot[] = [...lastPerBucket.values()].map((s) => {
    let parsed: { model?: unknown; data?: unknown } = {};
    try {
      parsed = s.poles ? (JSON.parse(s.poles) as typeof parsed) : {};
    } catch {
      parsed = {};
    }
    return {
      t: new Date(Number(s.t)).toISOString(),
      radius: n(s.radius),
      decayRatio: n(s.decay_ratio),
      trackerState: s.tracker_state,
      poles: { model: Array.isArray(parsed.model) ? (parsed.model as PoleDto[]) : [], data: Array.isArray(parsed.data) ? (parsed.data as PoleDto[]) : [] },
    };
  });

  const head = { loopId, from: new Date(from).toISOString(), to: new Date(to).toISOString(), tier, bucketMs } as const;
  const answer: LoopHistory | LoopHistoryColumns =
    opts.shape === "columns"
      ? { ...head, shape: "columns", ...bucketColumns(buckets), poles }
      : { ...head, points: buckets.map((b) => ({ ...b, t: new Date(b.t).toISOString() })), poles };
  return answer as HistoryAnswer<S>;
}

/** How long a pole snapshot's radius stands for the buckets after it (twice the one-minute snapshot cadence). */
export const RADIUS_HOLD_MS = 120_000;

/** A bucket as the query gives it (start time in epoch ms), before either answer shape. */
type Bucket = Omit<HistoryPoint, "t"> & { t: number };

const SERIES = ["sp", "pv", "mv", "radius"] as const;
const STATS = ["min", "mean", "max"] as const;
type StatColumn = `${(typeof SERIES)[number]}${Capitalize<(typeof STATS)[number]>}`;
const COLUMN_NAMES = SERIES.flatMap((k) => STATS.map((st) => ({ k, st, name: `${k}${st.charAt(0).toUpperCase()}${st.slice(1)}` as StatColumn })));

/**
 * The same history as columns (`?shape=columns`): one array per statistic (`spMin`, `spMean`,
 * `spMax`, ... `radiusMax`), index i for bucket i, `t` in epoch milliseconds, `null` where a bucket
 * has no value. About a third of the rows' JSON, and a browser parses arrays of numbers much
 * faster than one object per bucket.
 */
export type LoopHistoryColumns = Omit<LoopHistory, "points"> & { shape: "columns"; t: number[]; n: number[]; bad: number[]; uncertain: number[] } & Record<StatColumn, (number | null)[]>;

type CountColumns = { t: number[]; n: number[]; bad: number[]; uncertain: number[] };

function bucketColumns(buckets: readonly Bucket[]): CountColumns & Record<StatColumn, (number | null)[]> {
  const cols = { t: buckets.map((b) => b.t), n: buckets.map((b) => b.n), bad: buckets.map((b) => b.bad ?? 0), uncertain: buckets.map((b) => b.uncertain ?? 0) } as CountColumns & Record<StatColumn, (number | null)[]>;
  for (const { k, st, name } of COLUMN_NAMES) cols[name] = buckets.map((b) => b[k]?.[st] ?? null);
  return cols;
}

/** `LoopHistory` rows turned into `LoopHistoryColumns` (what `getLoopHistory` gives with `shape: "columns"`). */
export function historyColumns(h: LoopHistory): LoopHistoryColumns {
  const { points, ...head } = h;
  return { ...head, shape: "columns", ...bucketColumns(points.map((p) => ({ ...p, t: Date.parse(p.t) }))) };
}
