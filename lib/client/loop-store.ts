/**
 * Client-side store of the tenant's loops: seeded from `GET /api/loops` (full states), updated by
 * `loop:state` batches (LoopStateBrief summaries) and by any full LoopStateDto a page hands it (a
 * full state is a summary with more fields). A loop's state is replaced only by a newer one
 * (`at`); a state for a loop the store does not know is dropped. Updates are queued and applied
 * once per animation frame (any number of batches -> one render), and each loop keeps a short
 * ring of recent radius and decay-ratio values for the tile sparklines. Framework-free so the
 * benchmark and the wall share it.
 */
import "client-only";
import type { LiveLoopSummary, LoopStateBrief } from "@/lib/domain/types";

export const SPARK_POINTS = 120;

export interface Spark {
  radius: Float32Array;
  decay: Float32Array;
  /** Number of values written so far (the ring holds the last SPARK_POINTS). */
  n: number;
}

type Listener = () => void;

export class LoopStore {
  private loops = new Map<number, LiveLoopSummary>();
  private sparks = new Map<number, Spark>();
  private queue: LoopStateBrief[] = [];
  private listeners = new Set<Listener>();
  private scheduled = false;
  private snapshot: LiveLoopSummary[] = [];
  version = 0;
  /** Bumped when the set of loops or any loop's alarms change (not on live states): the wall re-sorts at once then. */
  structureVersion = 0;

  constructor(private readonly schedule: (cb: () => void) => void = defaultSchedule) {}

  /** Replace the known loops (a fresh API answer); keeps sparklines of loops still present. */
  seed(list: readonly LiveLoopSummary[]): void {
    const next = new Map<number, LiveLoopSummary>();
    for (const l of list) {
      const prev = this.loops.get(l.id);
      // A live state newer than the API's answer wins.
      const state = prev?.state && l.state && prev.state.at > l.state.at ? prev.state : l.state;
      next.set(l.id, { ...l, state });
      if (state && !this.sparks.has(l.id)) this.pushSpark(l.id, state);
    }
    this.loops = next;
    this.structureVersion++;
    this.emit();
  }

  /** Queue a batch of live states; applied on the next animation frame. */
  enqueue(batch: readonly LoopStateBrief[]): void {
    for (const s of batch) this.queue.push(s);
    if (!this.scheduled) {
      this.scheduled = true;
      this.schedule(() => this.flush());
    }
  }

  /** Apply queued states now (also called by the scheduler). */
  flush(): void {
    this.scheduled = false;
    if (this.queue.length === 0) return;
    const q = this.queue;
    this.queue = [];
    let changed = false;
    for (const s of q) {
      const l = this.loops.get(s.loopId);
      if (!l) continue;
      if (l.state && l.state.at > s.at) continue;
      this.loops.set(s.loopId, { ...l, state: s });
      this.pushSpark(s.loopId, s);
      changed = true;
    }
    if (changed) this.emit();
  }

  /** Replace the alarm list of one loop (from `alarm:changed`). */
  setAlarms(loopId: number, alarms: LiveLoopSummary["alarms"]): void {
    const l = this.loops.get(loopId);
    if (!l) return;
    this.loops.set(loopId, { ...l, alarms });
    this.structureVersion++;
    this.emit();
  }

  get(loopId: number): LiveLoopSummary | undefined {
    return this.loops.get(loopId);
  }

  spark(loopId: number): Spark | undefined {
    return this.sparks.get(loopId);
  }

  /** Stable array for useSyncExternalStore (a new array only after a change). */
  getSnapshot = (): LiveLoopSummary[] => this.snapshot;

  subscribe = (fn: Listener): (() => void) => {
    this.listeners.add(fn);
    return () => this.listeners.delete(fn);
  };

  private pushSpark(loopId: number, s: LoopStateBrief): void {
    let sp = this.sparks.get(loopId);
    if (!sp) {
      sp = { radius: new Float32Array(SPARK_POINTS).fill(NaN), decay: new Float32Array(SPARK_POINTS).fill(NaN), n: 0 };
      this.sparks.set(loopId, sp);
    }
    const i = sp.n % SPARK_POINTS;
    sp.radius[i] = s.spectralRadius ?? NaN;
    sp.decay[i] = s.decayRatio ?? NaN;
    sp.n++;
  }

  private emit(): void {
    this.version++;
    this.snapshot = Array.from(this.loops.values());
    for (const fn of this.listeners) fn();
  }
}

function defaultSchedule(cb: () => void): void {
  if (typeof requestAnimationFrame === "function") requestAnimationFrame(() => cb());
  else setTimeout(cb, 16);
}

/** Values of a spark ring in time order (oldest first). */
export function sparkValues(sp: Spark, which: "radius" | "decay"): number[] {
  const arr = sp[which];
  const n = Math.min(sp.n, SPARK_POINTS);
  const out: number[] = new Array(n);
  const start = sp.n - n;
  for (let k = 0; k < n; k++) out[k] = arr[(start + k) % SPARK_POINTS] ?? NaN;
  return out;
}
