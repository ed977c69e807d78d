/**
 * Buffered batch writer for the history tables. Ingest and trackers only append to bounded
 * in-memory queues (never awaiting MariaDB); a timer drains them with one multi-row
 * INSERT ... ON DUPLICATE KEY UPDATE per batch (lib/data/history-tables.ts).
 * When a queue is full the newest rows are shed and counted, so a slow database costs history,
 * never liveness.
 */
import type { Sequelize } from "sequelize";
import {
  HISTORY_TABLES,
  upsertHistoryRows,
  type HistoryTable,
  type LoopStateRow,
  type MinuteBucketRow,
  type PoleSnapshotRow,
  type SecondBucketRow,
} from "@/lib/data/history-tables";
import type { LoopStateDto } from "@/lib/domain/types";

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
    await this.drainQueue(HISTORY_TABLES.minutes, this.minutes);
    await this.drainQueue(HISTORY_TABLES.snapshots, this.snapshots);
    await this.drainQueue(HISTORY_TABLES.seconds, this.seconds);
    if (states && this.latest.size > 0) {
      const rows = [...this.latest.values()];
      this.latest.clear();
      for (let i = 0; i < rows.length; i += this.batch) {
        const part = rows.slice(i, i + this.batch);
        const ok = await this.insert(HISTORY_TABLES.loopStates, part);
        if (ok) this.statesWritten += part.length;
        else {
          // Keep the newest state per loop for the next attempt.
          for (const r of part) if (!this.latest.has(r.loopId)) this.latest.set(r.loopId, r);
          return;
        }
      }
    }
  }

  private async drainQueue<R>(table: HistoryTable<R>, q: BoundedQueue<R>): Promise<void> {
    while (q.items.length > 0) {
      const part = q.items.splice(0, this.batch);
      if (await this.insert(table, part)) q.written += part.length;
      else {
        q.unshift(part);
        return;
      }
    }
  }

  private async insert<R>(table: HistoryTable<R>, rows: R[]): Promise<boolean> {
    if (rows.length === 0) return true;
    // a row that cannot be written (e.g. a non-integer time) is counted and must not block the rest
    const { invalid, error } = await upsertHistoryRows(this.sequelize, table, rows);
    this.invalid += invalid;
    if (error === null) return true;
    this.errors++;
    this.lastError = `${table.name}: ${error instanceof Error ? error.message : String(error)}`.slice(0, 300);
    return false;
  }
}
