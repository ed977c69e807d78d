/**
 * Signal conditioning of one loop's telemetry (docs/architecture.md §4): PV, SP and MV scaled to
 * % of their spans (the units of the controller's %/% gains) and clipped, so hostile-but-valid
 * numbers cannot overflow the estimators; block averages over `decimation` samples (block
 * averaging is the anti-alias filter of the estimation period); the per-sample detectors (MV at a
 * limit, flat-lined PV, runs of bad samples); sample quality (a bad or uncertain sample stands in
 * as the last good value and is never learnt from, lib/domain/sample-quality.ts); and the
 * operating-point prefilter L(q) = (1 - q^-1)/(1 - 0.9 q^-1) applied to u, y and r alike (a
 * linear filter on input and output leaves the ARX relation intact: Ljung, *System
 * Identification*, 2nd ed., 1999, sec. 14.1; it removes the level and slow load drift, which
 * would enter the equation error as strongly coloured noise, without the noise gain of a pure
 * difference; the pole 0.9 per estimation sample keeps the band of the dominant modes).
 */
import { judgeSampleQuality, valueUsable } from "@/lib/domain/sample-quality";
import type { LoopMode, SampleDto, TrackerState } from "@/lib/domain/types";
import type { EstimationInput } from "./checkpoint";
import { fmt } from "./figures";
import { QualityWindow } from "./quality-window";
import type { LoopConfig } from "./types";

/** Normalised signals are clipped to this many % of span (100 x the span either way). */
export const CLIP_PCT = 10_000;
/** An MV within this fraction of its span of a limit counts as at the limit. */
export const LIMIT_TOLERANCE = 5e-4;
/** Consecutive samples at a limit before the loop counts as saturated. */
export const LIMIT_RUN = 3;
/** Pole of the operating-point prefilter L(q) = (1 - q^-1)/(1 - c q^-1). */
export const PREFILTER_POLE = 0.9;
/** Bad-quality samples in a row before the loop counts as `stale` (sensor fault). */
export const BAD_RUN = 3;
/** Seconds of samples in the quality window of the state. */
const QUALITY_WINDOW_S = 600;

function clipPct(x: number): number {
  return x > CLIP_PCT ? CLIP_PCT : x < -CLIP_PCT ? -CLIP_PCT : x;
}

export class SignalConditioner {
  config: LoopConfig;
  readonly quality: QualityWindow;
  lastSample: SampleDto | null = null;
  // decimation accumulators
  private accY = 0;
  private accU = 0;
  private accR = 0;
  private accN = 0;
  private accManual = false;
  private accSaturated = false;
  private accFlat = false;
  // per-sample detectors
  lastPv: number | null = null;
  flatRun = 0;
  limitRun = 0;
  limitSide: "high" | "low" | null = null;
  lastMode: LoopMode | null = null;
  prevSignals: { u: number; y: number; r: number } | null = null;
  filtered = { u: 0, y: 0, r: 0 };
  /** Last good normalised signals: what a bad sample stands in as (null before the first good one). */
  private held: { y: number; u: number; r: number } | null = null;
  private accBad = false;
  /** The block holds a sample stood in whole (not only its PV): it is never learnt from. */
  private accWhole = false;
  /** Zeros stood in for bad samples before any good one (see `ingest`). */
  private standIns = false;
  badRun = 0;

  constructor(
    config: LoopConfig,
    private readonly decimation: number,
    /** Samples of an exactly repeated PV that count as flat-lined. */
    readonly flatLimit: number,
  ) {
    this.config = config;
    this.quality = new QualityWindow(Math.max(60, Math.min(6000, Math.ceil(QUALITY_WINDOW_S / config.telemetryPeriodS))));
  }

  /** L(q) = (1 - q^-1) / (1 - c q^-1) applied to u, y and r alike; null for the first sample. */
  prefilter(u: number, y: number, r: number): { u: number; y: number; r: number } | null {
    const prev = this.prevSignals;
    this.prevSignals = { u, y, r };
    if (!prev) return null;
    const c = PREFILTER_POLE;
    const f = this.filtered;
    f.u = c * f.u + (u - prev.u);
    f.y = c * f.y + (y - prev.y);
    f.r = c * f.r + (r - prev.r);
    return f;
  }

  /** One telemetry sample in; the estimation sample when a block is complete, else null. */
  ingest(s: SampleDto): EstimationInput | null {
    const c = this.config;
    // ingest has judged the sample already; judging again covers direct callers and a range changed since
    const q = judgeSampleQuality(s, c);
    this.lastSample = { t: s.t, sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode, ...(q.reason === null ? {} : { quality: q.quality, qualityReason: q.reason }) };
    this.quality.add(q.quality, q.reason, s.t);
    this.lastMode = s.mode;
    let y: number, u: number, r: number;
    if (q.reason !== null) {
      // not good: the last good value stands in; `estimate` puts a trusted model's prediction in
      // its place, or (no trusted model) lets its block update nothing
      if (q.quality === "bad") this.badRun++;
      const last = this.held ?? this.prevSignals; // after a restore: the prefilter's last input
      if (last) {
        ({ y, u, r } = last);
        // a bad PV beside a good MV and SP: those are kept (and the block may be learnt from with
        // the model's prediction for the PV); anything else stands in whole and is not learnt from
        const pvOnly = (q.reason === "fault-value" || q.reason === "out-of-range") && valueUsable(s.mv, c.mvLo, c.mvHi) && valueUsable(s.sp, c.pvLo, c.pvHi);
        if (pvOnly) {
          u = clipPct((100 * (s.mv - c.mvLo)) / (c.mvHi - c.mvLo));
          r = clipPct((100 * (s.sp - c.pvLo)) / (c.pvHi - c.pvLo));
        } else this.accWhole = true;
      } else {
        // nothing good seen yet: zeros stand in, and the prefilter forgets them at the first good sample
        y = u = r = 0;
        this.standIns = true;
        this.accWhole = true;
      }
      this.accBad = true;
    } else {
      this.badRun = 0;
      y = clipPct((100 * (s.pv - c.pvLo)) / (c.pvHi - c.pvLo));
      u = clipPct((100 * (s.mv - c.mvLo)) / (c.mvHi - c.mvLo));
      r = clipPct((100 * (s.sp - c.pvLo)) / (c.pvHi - c.pvLo));
      // the stand-ins before the first good sample are no history for the prefilter
      if (this.standIns) this.prevSignals = null;
      this.standIns = false;
      this.held = { y, u, r };
      // flat-lined PV: a live measurement never repeats exactly for long (noise, quantisation aside)
      if (this.lastPv !== null && s.pv === this.lastPv) this.flatRun++;
      else this.flatRun = 0;
      this.lastPv = s.pv;
      const tol = LIMIT_TOLERANCE * (c.mvHi - c.mvLo);
      const side = s.mv >= c.mvLimitHi - tol ? "high" : s.mv <= c.mvLimitLo + tol ? "low" : null;
      if (side && side === this.limitSide) this.limitRun++;
      else this.limitRun = side ? 1 : 0;
      this.limitSide = side;
    }
    this.accY += y;
    this.accU += u;
    this.accR += r;
    this.accN++;
    if (s.mode === "manual") this.accManual = true;
    if (this.limitRun >= LIMIT_RUN) this.accSaturated = true;
    if (this.flatRun >= this.flatLimit) this.accFlat = true;
    if (this.accN < this.decimation) return null;
    const yy = this.accY / this.accN;
    const uu = this.accU / this.accN;
    const rr = this.accR / this.accN;
    const manual = this.accManual;
    const saturated = this.accSaturated;
    const flat = this.accFlat;
    const bad = this.accBad;
    const whole = this.accWhole;
    this.accY = this.accU = this.accR = 0;
    this.accN = 0;
    this.accManual = this.accSaturated = this.accFlat = this.accBad = this.accWhole = false;
    return { u: uu, y: yy, r: rr, manual, saturated, flat, t: s.t, bad, whole };
  }

  /**
   * What the signals alone say about the loop at `now` (epoch ms), before any model is asked:
   * silent (3 delivery periods, so a batching gateway does not flap), PV flat-lined, in manual,
   * a run of bad samples, MV pinned at a limit; null when none of these holds.
   */
  signalKind(now: number, receivedAt: number, deliveryPeriodMs: number): { state: TrackerState; reason: string } | null {
    const c = this.config;
    const silence = now - receivedAt;
    if (silence > 3 * Math.max(c.telemetryPeriodS * 1000, deliveryPeriodMs)) return { state: "stale", reason: `no sample for ${(silence / 1000).toFixed(silence < 10_000 ? 1 : 0)} s` };
    // a PV held at or past an end of its range is a transmitter at its signal limit (the process
    // beyond the range), not a frozen one; an operator's manual loop says so first
    const flat = this.flatRun >= this.flatLimit;
    const pegged = flat && this.lastPv !== null && (this.lastPv >= c.pvHi || this.lastPv <= c.pvLo);
    if (flat && !pegged) {
      return { state: "stale", reason: `PV flat at ${fmt(this.lastPv)} for ${this.flatRun + 1} samples: frozen transmitter?` };
    }
    if (this.lastMode === "manual") return { state: "manual", reason: "loop in manual: the controller is not acting" };
    if (pegged) {
      return { state: "stale", reason: `PV held at ${fmt(this.lastPv)}, at or past its range end (${fmt(this.lastPv! >= c.pvHi ? c.pvHi : c.pvLo)}), for ${this.flatRun + 1} samples: the process is beyond the transmitter's range` };
    }
    // after manual: an operator's loop says so first (a level left in manual may drain beyond its
    // range in a simulator); the quality counts still show the bad samples
    if (this.badRun >= BAD_RUN) {
      const why = this.quality.lastBadReason === "reported-bad" ? "marked bad by the gateway" : this.quality.lastBadReason === "out-of-range" ? "out of range" : "a fault value";
      return { state: "stale", reason: `${this.badRun} samples in a row of bad quality (${why}, last PV ${fmt(this.lastSample?.pv ?? null)}): sensor fault?` };
    }
    if (this.limitRun >= LIMIT_RUN) {
      const lim = this.limitSide === "high" ? c.mvLimitHi : c.mvLimitLo;
      return { state: "saturated", reason: `MV at its ${this.limitSide} limit (${fmt(lim)}): the loop is open` };
    }
    return null;
  }
}
