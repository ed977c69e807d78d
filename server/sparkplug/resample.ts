/**
 * Report by exception to a loop's period. A Sparkplug gateway sends a metric only when it changes
 * (a set point may come only in the birth), while a loop tracker wants one sample per telemetry
 * period. So the last value of each mapped metric is held and sampled on the loop's grid
 * (multiples of the period in epoch ms): the sample at grid time g carries the values last
 * changed at or before g. Pure; the host advances it on data and on its tick.
 */
import type { LoopMode } from "@/lib/domain/types";
import type { LoopMapping, MetricValue } from "@/lib/domain/sparkplug";

export type { LoopMapping } from "@/lib/domain/sparkplug";

/** A candidate sample; ingest validates it like a JSON one (NaN is rejected there, counted). */
export interface HeldSample {
  t: number;
  sp: number;
  pv: number;
  mv: number;
  mode: LoopMode;
}

/** At most this many grid points are filled in one step; past it the held values are too old to stand for the loop. */
export const MAX_FILL = 3_600;

/**
 * A mode metric's value as a loop mode: a string auto/manual/cascade (any case), a boolean
 * (true = auto, false = manual) or an integer 0 manual, 1 auto, 2 cascade (Rimguard's convention,
 * stated on the mapping form). Anything else is not a mode.
 */
export function modeOf(v: MetricValue): LoopMode | null {
  if (typeof v === "string") {
    const s = v.trim().toLowerCase();
    return s === "auto" || s === "manual" || s === "cascade" ? s : null;
  }
  if (typeof v === "boolean") return v ? "auto" : "manual";
  if (v === 0) return "manual";
  if (v === 1) return "auto";
  if (v === 2) return "cascade";
  return null;
}

export class LoopResampler {
  private sp: number | undefined;
  private pv: number | undefined;
  private mv: number | undefined;
  private mode: LoopMode;
  /** The last grid time emitted; null = none since the start, a death or a jump. */
  private lastGrid: number | null = null;
  /** The time of the newest value taken. */
  private latest = -Infinity;
  /** No grid point at or before this time (a death, a restart). */
  private floor = -Infinity;
  /** Values that could not be read as this loop's signals (a string PV, an unknown mode). */
  unreadable = 0;

  constructor(
    readonly mapping: LoopMapping,
    readonly periodMs: number,
  ) {
    this.mode = "auto";
  }

  get newest(): number {
    return this.latest;
  }

  /** A copy holding the same values (for a historical run that must not move the live grid). */
  fork(): LoopResampler {
    const r = new LoopResampler(this.mapping, this.periodMs);
    r.sp = this.sp;
    r.pv = this.pv;
    r.mv = this.mv;
    r.mode = this.mode;
    return r;
  }

  /** The source went away (or Rimguard restarted) at `at`: no grid point at or before it is filled. */
  reset(at: number): void {
    this.lastGrid = null;
    this.floor = at;
  }

  /** Take value changes (oldest first), emitting the grid points before each change. */
  apply(updates: readonly { name: string; t: number; value: MetricValue }[]): HeldSample[] {
    const out: HeldSample[] = [];
    for (const u of updates) {
      const which = this.signalOf(u.name);
      if (which === null) continue;
      if (u.t < this.latest) continue; // older than what is held: history has its own path
      this.advanceTo(u.t - 1, out);
      this.set(which, u.value);
      this.latest = u.t;
    }
    this.advanceTo(this.latest, out);
    return out;
  }

  /** Emit every grid point up to `until` (inclusive) with the held values. */
  advance(until: number): HeldSample[] {
    const out: HeldSample[] = [];
    this.advanceTo(until, out);
    return out;
  }

  private advanceTo(until: number, out: HeldSample[]): void {
    if (this.sp === undefined || this.pv === undefined || this.mv === undefined || !Number.isFinite(until)) return;
    const p = this.periodMs;
    let g = this.lastGrid === null ? Math.ceil(Math.max(this.latest, this.floor + 1) / p) * p : this.lastGrid + p;
    if (!Number.isFinite(g)) return;
    if ((until - g) / p > MAX_FILL) g = Math.ceil((until - MAX_FILL * p) / p) * p;
    for (; g <= until; g += p) {
      out.push({ t: g, sp: this.sp, pv: this.pv, mv: this.mv, mode: this.mode });
      this.lastGrid = g;
    }
  }

  private signalOf(name: string): "sp" | "pv" | "mv" | "mode" | null {
    const m = this.mapping;
    if (name === m.pv) return "pv";
    if (name === m.sp) return "sp";
    if (name === m.mv) return "mv";
    if (name === m.mode) return "mode";
    return null;
  }

  private set(which: "sp" | "pv" | "mv" | "mode", v: MetricValue): void {
    if (which === "mode") {
      const mode = modeOf(v);
      if (mode) this.mode = mode;
      else this.unreadable++;
      return;
    }
    // null (the metric's is_null) and a non-number are held as NaN: ingest counts those samples as non-finite
    if (v !== null && typeof v !== "number") this.unreadable++;
    this[which] = typeof v === "number" ? v : NaN;
  }
}
