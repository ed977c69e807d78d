/**
 * In-memory aggregation for the history tiers (docs/architecture.md §6): per-second min/mean/max of
 * SP, PV, MV (a loop at 1 Hz or slower gives one sample per row, n = 1), 1-minute aggregates of
 * SP, PV, MV and the spectral radius, pole snapshots at a coarser period or on change. Pure: the
 * writer decides when rows go to MariaDB. A sample of bad or uncertain quality (lib/domain/sample-quality.ts)
 * enters no min/mean/max: it is counted in its row's `bad` or `uncertain` (`n` counts the good ones).
 */
import type { LoopMode, LoopStateDto, SampleDto } from "@/lib/domain/types";

export const SECOND_MS = 1_000;
export const MINUTE_MS = 60_000;

class MinMeanMax {
  min = Infinity;
  max = -Infinity;
  sum = 0;
  n = 0;
  add(v: number): void {
    if (v < this.min) this.min = v;
    if (v > this.max) this.max = v;
    this.sum += v;
    this.n++;
  }
  row(): [number | null, number | null, number | null] {
    return this.n === 0 ? [null, null, null] : [this.min, this.sum / this.n, this.max];
  }
}

export type { MinuteBucketRow, PoleSnapshotRow, SecondBucketRow } from "@/lib/data/history-tables";
import type { MinuteBucketRow, PoleSnapshotRow, SecondBucketRow } from "@/lib/data/history-tables";

class Bucket {
  readonly sp = new MinMeanMax();
  readonly pv = new MinMeanMax();
  readonly mv = new MinMeanMax();
  readonly radius = new MinMeanMax();
  manual = 0;
  bad = 0;
  uncertain = 0;
  mode: LoopMode | null = null;
  constructor(readonly t: number) {}
  addSample(s: SampleDto): void {
    if (s.quality === "bad" || s.quality === "uncertain") {
      if (s.quality === "bad") this.bad++;
      else this.uncertain++;
      return;
    }
    this.sp.add(s.sp);
    this.pv.add(s.pv);
    this.mv.add(s.mv);
    if (s.mode === "manual") this.manual++;
    this.mode = s.mode;
  }
}

export interface AggregatorOptions {
  /** Write a pole snapshot at least this often per loop while it updates (ms). */
  snapshotEveryMs?: number;
  /** ...and sooner when the spectral radius moved by more than this. */
  snapshotRadiusStep?: number;
}

export class HistoryAggregator {
  private readonly seconds = new Map<number, Bucket>();
  private readonly minutes = new Map<number, Bucket>();
  private readonly lastSnapshot = new Map<number, { t: number; radius: number | null; state: string }>();
  /** Start of the last minute written per loop: a late estimate must not overwrite that row. */
  private readonly emittedMinute = new Map<number, number>();
  private readonly snapshotEveryMs: number;
  private readonly radiusStep: number;

  constructor(
    private readonly out: {
      second(row: SecondBucketRow): void;
      minute(row: MinuteBucketRow): void;
      snapshot(row: PoleSnapshotRow): void;
    },
    opts: AggregatorOptions = {},
  ) {
    this.snapshotEveryMs = opts.snapshotEveryMs ?? 60_000;
    this.radiusStep = opts.snapshotRadiusStep ?? 0.01;
  }

  /** Samples of one loop in time order (ingest guarantees strictly increasing t). */
  addSamples(loopId: number, samples: readonly SampleDto[]): void {
    for (const s of samples) {
      this.openBucket("second", loopId, Math.floor(s.t / SECOND_MS) * SECOND_MS).addSample(s);
      const min = Math.floor(s.t / MINUTE_MS) * MINUTE_MS;
      if (min <= (this.emittedMinute.get(loopId) ?? -Infinity)) continue;
      this.openBucket("minute", loopId, min).addSample(s);
    }
  }

  /** The loop's open bucket of the period starting at `t`; a bucket still open for another period is emitted first. */
  private openBucket(series: "second" | "minute", loopId: number, t: number): Bucket {
    const open = series === "second" ? this.seconds : this.minutes;
    let b = open.get(loopId);
    if (b && b.t !== t) {
      if (series === "second") this.emitSecond(loopId, b);
      else this.emitMinute(loopId, b);
      b = undefined;
    }
    if (!b) {
      b = new Bucket(t);
      open.set(loopId, b);
    }
    return b;
  }

  /** A tracker estimate: feeds the minute's radius statistics and the pole snapshots. */
  addState(state: LoopStateDto): void {
    const r = state.spectralRadius;
    if (r !== null && Number.isFinite(r)) {
      const min = Math.floor(state.at / MINUTE_MS) * MINUTE_MS;
      const m = this.minutes.get(state.loopId);
      if (m && m.t === min) m.radius.add(r);
      else if ((!m || m.t < min) && min > (this.emittedMinute.get(state.loopId) ?? -Infinity)) {
        if (m) this.emitMinute(state.loopId, m);
        const fresh = new Bucket(min);
        fresh.radius.add(r);
        this.minutes.set(state.loopId, fresh);
      }
    }
    const last = this.lastSnapshot.get(state.loopId);
    const due =
      !last ||
      state.at - last.t >= this.snapshotEveryMs ||
      last.state !== state.trackerState ||
      (r !== null && (last.radius === null || Math.abs(r - last.radius) > this.radiusStep)) ||
      (r === null) !== (last.radius === null);
    if (due && (!last || state.at > last.t)) {
      this.lastSnapshot.set(state.loopId, { t: state.at, radius: r, state: state.trackerState });
      this.out.snapshot({
        loopId: state.loopId,
        t: state.at,
        radius: finiteOrNull(r),
        decayRatio: finiteOrNull(state.decayRatio),
        poles: JSON.stringify({ model: state.modelPoles, data: state.dataPoles, dataKind: state.dataPolesKind }),
        trackerState: state.trackerState,
      });
    }
  }

  /** Close buckets whose period ended before `now - graceMs` (loops that went quiet). */
  closeIdle(now: number, graceMs = 2_000): void {
    for (const [loopId, b] of this.seconds) {
      if (b.t + SECOND_MS + graceMs <= now) {
        this.emitSecond(loopId, b);
        this.seconds.delete(loopId);
      }
    }
    for (const [loopId, m] of this.minutes) {
      if (m.t + MINUTE_MS + graceMs <= now) {
        this.emitMinute(loopId, m);
        this.minutes.delete(loopId);
      }
    }
  }

  /** Emit every open bucket (shutdown). */
  closeAll(): void {
    for (const [loopId, b] of this.seconds) this.emitSecond(loopId, b);
    for (const [loopId, m] of this.minutes) this.emitMinute(loopId, m);
    this.seconds.clear();
    this.minutes.clear();
  }

  forget(loopId: number): void {
    this.seconds.delete(loopId);
    this.minutes.delete(loopId);
    this.lastSnapshot.delete(loopId);
    this.emittedMinute.delete(loopId);
  }

  private emitSecond(loopId: number, b: Bucket): void {
    if (b.sp.n === 0 && b.bad === 0 && b.uncertain === 0) return;
    this.out.second({ loopId, t: b.t, sp: b.sp.row(), pv: b.pv.row(), mv: b.mv.row(), mode: b.mode, n: b.sp.n, bad: b.bad, uncertain: b.uncertain });
  }

  private emitMinute(loopId: number, m: Bucket): void {
    if (m.sp.n === 0 && m.radius.n === 0 && m.bad === 0 && m.uncertain === 0) return;
    this.emittedMinute.set(loopId, m.t);
    this.out.minute({
      loopId,
      t: m.t,
      sp: m.sp.row(),
      pv: m.pv.row(),
      mv: m.mv.row(),
      mode: m.mode,
      n: m.sp.n,
      bad: m.bad,
      uncertain: m.uncertain,
      radius: m.radius.row(),
      manualFraction: m.sp.n === 0 ? null : m.manual / m.sp.n,
    });
  }
}

function finiteOrNull(v: number | null | undefined): number | null {
  return v === null || v === undefined || !Number.isFinite(v) ? null : v;
}
