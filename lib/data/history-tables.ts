/**
 * The history tables as the batch writer (server/history/writer.ts) fills them: one multi-row
 * INSERT ... ON DUPLICATE KEY UPDATE per batch through sequelize.query (bulkCreate costs about
 * five times the CPU per row, docs/architecture.md §11). Values are numbers, NULL or fixed enums
 * and are written inline; the one text column (pole JSON) goes through the driver's escaping.
 */
import type { Sequelize } from "sequelize";
import { TRACKER_STATES, type LoopMode, type LoopStateDto } from "@/lib/domain/types";

export interface SecondBucketRow {
  loopId: number;
  t: number;
  sp: [number | null, number | null, number | null];
  pv: [number | null, number | null, number | null];
  mv: [number | null, number | null, number | null];
  mode: LoopMode | null;
  /** Good samples in the statistics. */
  n: number;
  /** Samples of bad and of uncertain quality in the period (not in the statistics); absent = 0. */
  bad?: number;
  uncertain?: number;
}
export interface MinuteBucketRow extends SecondBucketRow {
  radius: [number | null, number | null, number | null];
  manualFraction: number | null;
}
export interface PoleSnapshotRow {
  loopId: number;
  t: number;
  radius: number | null;
  decayRatio: number | null;
  poles: string;
  trackerState: LoopStateDto["trackerState"];
}

const MODES = new Set(["auto", "manual", "cascade"]);
const STATES = new Set<string>(TRACKER_STATES);

function num(v: number | null | undefined): string {
  return v === null || v === undefined || !Number.isFinite(v) ? "NULL" : String(v);
}
function int(v: number): string {
  if (!Number.isSafeInteger(v)) throw new RangeError(`not an integer: ${v}`);
  return String(v);
}
const triple = (x: [number | null, number | null, number | null]) => `${num(x[0])},${num(x[1])},${num(x[2])}`;

export interface HistoryTable<R> {
  name: string;
  columns: string;
  update: string;
  values(row: R, esc: (s: string) => string): string;
}

const SECONDS: HistoryTable<SecondBucketRow> = {
  name: "samples_1s",
  columns: "loop_id,t,sp_min,sp_mean,sp_max,pv_min,pv_mean,pv_max,mv_min,mv_mean,mv_max,mode,n,bad_n,uncertain_n",
  update: ["sp_min", "sp_mean", "sp_max", "pv_min", "pv_mean", "pv_max", "mv_min", "mv_mean", "mv_max", "mode", "n", "bad_n", "uncertain_n"].map((c) => `${c}=VALUES(${c})`).join(","),
  values: (r) =>
    `(${int(r.loopId)},${int(r.t)},${triple(r.sp)},${triple(r.pv)},${triple(r.mv)},${r.mode && MODES.has(r.mode) ? `'${r.mode}'` : "NULL"},${int(Math.min(r.n, 65535))},${int(Math.min(r.bad ?? 0, 65535))},${int(Math.min(r.uncertain ?? 0, 65535))})`,
};

const MINUTES: HistoryTable<MinuteBucketRow> = {
  name: "samples_1m",
  columns: "loop_id,t,sp_min,sp_mean,sp_max,pv_min,pv_mean,pv_max,mv_min,mv_mean,mv_max,radius_min,radius_mean,radius_max,manual_fraction,n,bad_n,uncertain_n",
  update: ["sp_min", "sp_mean", "sp_max", "pv_min", "pv_mean", "pv_max", "mv_min", "mv_mean", "mv_max", "radius_min", "radius_mean", "radius_max", "manual_fraction", "n", "bad_n", "uncertain_n"]
    .map((c) => `${c}=VALUES(${c})`)
    .join(","),
  values: (r) => `(${int(r.loopId)},${int(r.t)},${triple(r.sp)},${triple(r.pv)},${triple(r.mv)},${triple(r.radius)},${num(r.manualFraction)},${int(r.n)},${int(r.bad ?? 0)},${int(r.uncertain ?? 0)})`,
};

const SNAPSHOTS: HistoryTable<PoleSnapshotRow> = {
  name: "pole_snapshots",
  columns: "loop_id,t,radius,decay_ratio,poles,tracker_state",
  update: ["radius", "decay_ratio", "poles", "tracker_state"].map((c) => `${c}=VALUES(${c})`).join(","),
  values: (r, esc) => `(${int(r.loopId)},${int(r.t)},${num(r.radius)},${num(r.decayRatio)},${esc(r.poles)},'${STATES.has(r.trackerState) ? r.trackerState : "learning"}')`,
};

export interface LoopStateRow {
  loopId: number;
  tenantId: number;
  state: LoopStateDto;
}
const LOOP_STATES: HistoryTable<LoopStateRow> = {
  name: "loop_states",
  columns: "loop_id,tenant_id,tracker_state,latest,at",
  update: ["tenant_id", "tracker_state", "latest", "at"].map((c) => `${c}=VALUES(${c})`).join(","),
  values: (r, esc) =>
    `(${int(r.loopId)},${int(r.tenantId)},'${STATES.has(r.state.trackerState) ? r.state.trackerState : "learning"}',${esc(JSON.stringify(r.state, finiteJson))},${int(Math.round(r.state.at))})`,
};

/** JSON has no NaN/Infinity: write null rather than let JSON.stringify do it silently. */
function finiteJson(_k: string, v: unknown): unknown {
  return typeof v === "number" && !Number.isFinite(v) ? null : v;
}

export const HISTORY_TABLES = { seconds: SECONDS, minutes: MINUTES, snapshots: SNAPSHOTS, loopStates: LOOP_STATES } as const;

/**
 * Upsert rows into one history table. Rows that cannot be written are counted in `invalid` and
 * left out; a database error is returned, not thrown, so the writer can keep the batch.
 */
export async function upsertHistoryRows<R>(sequelize: Sequelize, table: HistoryTable<R>, rows: readonly R[]): Promise<{ invalid: number; error: unknown }> {
  const esc = (s: string) => sequelize.escape(s);
  const parts: string[] = [];
  let invalid = 0;
  for (const r of rows) {
    try {
      parts.push(table.values(r, esc));
    } catch {
      invalid++;
    }
  }
  if (parts.length === 0) return { invalid, error: null };
  try {
    await sequelize.query(`INSERT INTO ${table.name} (${table.columns}) VALUES ${parts.join(",")} ON DUPLICATE KEY UPDATE ${table.update}`);
    return { invalid, error: null };
  } catch (error) {
    return { invalid, error: error ?? new Error("unknown database error") };
  }
}
