/**
 * Buffered batch writer for the history tables. Ingest and trackers only append to bounded
 * in-memory queues (never awaiting MariaDB); a timer drains them with one multi-row
 * INSERT ... ON DUPLICATE KEY UPDATE per batch through sequelize.query (bulkCreate costs about
 * five times the CPU per row, docs/architecture.md §11). Values are numbers, NULL or fixed enums and
 * are written inline; the one text column (pole JSON) goes through the driver's escaping.
 * When a queue is full the newest rows are shed and counted, so a slow database costs history,
 * never liveness.
 */
import type { Sequelize } from "sequelize";
import type { LoopStateDto } from "@/lib/domain/types";
import { TRACKER_STATES } from "@/lib/domain/types";
import type { MinuteBucketRow, PoleSnapshotRow, SecondBucketRow } from "./aggregate";

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

interface Table<R> {
  name: string;
  columns: string;
  update: string;
  values(row: R, esc: (s: string) => string): string;
}

const SECONDS: Table<SecondBucketRow> = {
  name: "samples_1s",
  columns: "loop_id,t,sp_min,sp_mean,sp_max,pv_min,pv_mean,pv_max,mv_min,mv_mean,mv_max,mode,n,bad_n,uncertain_n",
  update: ["sp_min", "sp_mean", "sp_max", "pv_min", "pv_mean", "pv_max", "mv_min", "mv_mean", "mv_max", "mode", "n", "bad_n", "uncertain_n"].map((c) => `${c}=VALUES(${c})`).join(","),
  values: (r) =>
    `(${int(r.loopId)},${int(r.t)},${triple(r.sp)},${triple(r.pv)},${triple(r.mv)},${r.mode && MODES.has(r.mode) ? `'${r.mode}'` : "NULL"},${int(Math.min(r.n, 65535))},${int(Math.min(r.bad ?? 0, 65535))},${int(Math.min(r.uncertain ?? 0, 65535))})`,
};

const MINUTES: Table<MinuteBucketRow> = {
  name: "samples_1m",
  columns: "loop_id,t,sp_min,sp_mean,sp_max,pv_min,pv_mean,pv_max,mv_min,mv_mean,mv_max,radius_min,radius_mean,radius_max,manual_fraction,n,bad_n,uncertain_n",
  update: ["sp_min", "sp_mean", "sp_max", "pv_min", "pv_mean", "pv_max", "mv_min", "mv_mean", "mv_max", "radius_min", "radius_mean", "radius_max", "manual_fraction", "n", "bad_n", "uncertain_n"]
    .map((c) => `${c}=VALUES(${c})`)
    .join(","),
  values: (r) => `(${int(r.loopId)},${int(r.t)},${triple(r.sp)},${triple(r.pv)},${triple(r.mv)},${triple(r.radius)},${num(r.manualFraction)},${int(r.n)},${int(r.bad ?? 0)},${int(r.uncertain ?? 0)})`,
};

const SNAPSHOTS: Table<PoleSnapshotRow> = {
  name: "pole_snapshots",
  columns: "loop_id,t,radius,decay_ratio,poles,tracker_state",
  update: ["radius", "decay_ratio", "poles", "tracker_state"].map((c) => `${c}=VALUES(${c})`).join(","),
  values: (r, esc) => `(${int(r.loopId)},${int(r.t)},${num(r.radius)},${num(r.decayRatio)},${esc(r.poles)},'${STATES.has(r.trackerState) ? r.trackerState : "learning"}')`,
};

interface LoopStateRow {
  loopId: number;
  tenantId: number;
  state: LoopStateDto;
}
const LOOP_STATES: Table<LoopStateRow> = {
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

class BoundedQueue<R> {
  items: R[] = [];
  shed = 0;
  written = 0;
  constructor(readonly max: number) {}
  push(r: R): void {
    if (this.items.length >= this.max) {
      this.shed++;
      return;
    }
    this.items.push(r);
  }
  /** Put rows back at the front after a failed write, within the bound. */
  unshift(rows: R[]): void {
    const room = Math.max(0, this.max - this.items.length);
    if (rows.length > room) this.shed += rows.length - room;
    this.items = rows.slice(0, room).concat(this.items);
  }
}

export interface HistoryWriterOptions {
  /** Rows per INSERT statement. */
  batchRows?: number;
  /** Queue bounds (rows). */
  maxSecondRows?: number;
  maxMinuteRows?: number;
  maxSnapshotRows?: number;
  /** Latest loop states are upserted at most this often (ms); the newest per loop wins. */
  statesEveryMs?: number;
}

export class HistoryWriter {
  private readonly seconds: BoundedQueue<SecondBucketRow>;
  private readonly minutes: BoundedQueue<MinuteBucketRow>;
  private readonly snapshots: BoundedQueue<PoleSnapshotRow>;
  /** Latest state per loop (a map, so it is bounded by the number of loops). */
  private readonly latest = new Map<number, LoopStateRow>();
  private readonly batch: number;
  private flushing: Promise<void> | null = null;
  private readonly statesEveryMs: number;
  private lastStatesWrite = -Infinity;
  errors = 0;
  invalid = 0;
  lastError: string | null = null;
  statesWritten = 0;

  constructor(
    private readonly sequelize: Sequelize,
    opts: HistoryWriterOptions = {},
  ) {
    this.batch = opts.batchRows ?? 1000;
    this.statesEveryMs = opts.statesEveryMs ?? 5_000;
    this.seconds = new BoundedQueue(opts.maxSecondRows ?? 200_000);
    this.minutes = new BoundedQueue(opts.maxMinuteRows ?? 50_000);
    this.snapshots = new BoundedQueue(opts.maxSnapshotRows ?? 50_000);
  }

  second(row: SecondBucketRow): void {
    this.seconds.push(row);
  }
  minute(row: MinuteBucketRow): void {
    this.minutes.push(row);
  }
  snapshot(row: PoleSnapshotRow): void {
    this.snapshots.push(row);
  }
  state(state: LoopStateDto): void {
    this.latest.set(state.loopId, { loopId: state.loopId, tenantId: state.tenantId, state });
  }

  pending(): number {
    return this.seconds.items.length + this.minutes.items.length + this.snapshots.items.length + this.latest.size;
  }

  stats() {
    return {
      queued: { samples_1s: this.seconds.items.length, samples_1m: this.minutes.items.length, pole_snapshots: this.snapshots.items.length, loop_states: this.latest.size },
      written: { samples_1s: this.seconds.written, samples_1m: this.minutes.written, pole_snapshots: this.snapshots.written, loop_states: this.statesWritten },
      shed: { samples_1s: this.seconds.shed, samples_1m: this.minutes.shed, pole_snapshots: this.snapshots.shed },
      errors: this.errors,
      invalidRows: this.invalid,
      lastError: this.lastError,
    };
  }

  /**
   * Drain the queues; concurrent calls share one flush. Never throws (errors are counted).
   * Loop states are written when `force` is set or `statesEveryMs` passed since the last write.
   */
  flush(opts: { now?: number; force?: boolean } = {}): Promise<void> {
    if (!this.flushing) {
      const now = opts.now ?? Date.now();
      const states = opts.force === true || now - this.lastStatesWrite >= this.statesEveryMs;
      if (states) this.lastStatesWrite = now;
      this.flushing = this.drain(states).finally(() => {
        this.flushing = null;
      });
    }
    return this.flushing;
  }

  private async drain(states: boolean): Promise<void> {
    await this.drainQueue(MINUTES, this.minutes);
    await this.drainQueue(SNAPSHOTS, this.snapshots);
    await this.drainQueue(SECONDS, this.seconds);
    if (states && this.latest.size > 0) {
      const rows = [...this.latest.values()];
      this.latest.clear();
      for (let i = 0; i < rows.length; i += this.batch) {
        const part = rows.slice(i, i + this.batch);
        const ok = await this.insert(LOOP_STATES, part);
        if (ok) this.statesWritten += part.length;
        else {
          // Keep the newest state per loop for the next attempt.
          for (const r of part) if (!this.latest.has(r.loopId)) this.latest.set(r.loopId, r);
          return;
        }
      }
    }
  }

  private async drainQueue<R>(table: Table<R>, q: BoundedQueue<R>): Promise<void> {
    while (q.items.length > 0) {
      const part = q.items.splice(0, this.batch);
      if (await this.insert(table, part)) q.written += part.length;
      else {
        q.unshift(part);
        return;
      }
    }
  }

  private async insert<R>(table: Table<R>, rows: R[]): Promise<boolean> {
    if (rows.length === 0) return true;
    const esc = (s: string) => this.sequelize.escape(s);
    const parts: string[] = [];
    for (const r of rows) {
      try {
        parts.push(table.values(r, esc));
      } catch {
        this.invalid++; // a row that cannot be written (e.g. a non-integer time) must not block the rest
      }
    }
    if (parts.length === 0) return true;
    const values = parts.join(",");
    try {
      await this.sequelize.query(`INSERT INTO ${table.name} (${table.columns}) VALUES ${values} ON DUPLICATE KEY UPDATE ${table.update}`);
      return true;
    } catch (err) {
      this.errors++;
      this.lastError = `${table.name}: ${err instanceof Error ? err.message : String(err)}`.slice(0, 300);
      return false;
    }
  }
}
