/**
 * A window of samples put on a uniform grid for the figures. Historian exports are irregular
 * (compression stores a point only when the value moves), so every figure runs on the grid:
 * SP, mode and quality are held (they change in steps), PV and MV are linearly interpolated
 * between stored points (how a historian reconstructs compressed data: common practice).
 *
 * This is the seam for live use: a tracker can keep a ring buffer of samples and build a window
 * from it; every figure is a pure function of the window.
 */
import type { LoopConfig } from "./config";
import { median } from "./signal";
import type { AssessSample } from "./types";

export const MODE_AUTO = 0;
export const MODE_MANUAL = 1;
export const MODE_CASCADE = 2;
export const MODE_UNKNOWN = 255;

export interface AssessWindow {
  /** Grid period, s (>= the loop's sample period). */
  T: number;
  n: number;
  sp: Float64Array;
  pv: Float64Array;
  mv: Float64Array;
  /** Control error sp - pv in % of the PV span. */
  e: Float64Array;
  /** PV in % of span. */
  pvPct: Float64Array;
  mode: Uint8Array;
  /** 1 where the sample is usable (quality not bad, finite values, not inside a data gap). */
  good: Uint8Array;
  hasMode: boolean;
  pvSpan: number;
  /** Median spacing of the raw samples, s. */
  rawSpacing: number;
  /** Raw sample count and span. */
  samples: number;
  spanS: number;
  /** Share of raw samples with bad quality or missing values. */
  badQualityShare: number;
  /** Share of grid points inside gaps of the export (no data; not a quality problem). */
  gapShare: number;
  /**
   * Share of the bridged grid points (outside gaps) that lie more than half a grid period from
   * every stored point: values interpolated between stored points, as an export of points stored
   * by exception (a dead band or swinging door) reads when replayed; compression.ts.
   */
  interpolatedShare: number;
}

/** A gap in the export longer than this many grid periods (and 60 s) is not bridged. */
const GAP_PERIODS = 10;

/** Uniform grid from irregular samples (sorted by t). `maxPoints` bounds the grid size. */
export function buildWindow(samples: readonly AssessSample[], config: LoopConfig, maxPoints = 2_000_000): AssessWindow {
  const nRaw = samples.length;
  const spacing = new Float64Array(Math.max(0, nRaw - 1));
  for (let i = 1; i < nRaw; i++) spacing[i - 1] = samples[i]!.t - samples[i - 1]!.t;
  const rawSpacing = nRaw > 1 ? median(spacing) : config.samplePeriodS;
  const spanS = nRaw > 1 ? samples[nRaw - 1]!.t - samples[0]!.t : 0;
  let T = Math.max(config.samplePeriodS, rawSpacing > 0 ? rawSpacing : config.samplePeriodS);
  if (spanS / T > maxPoints) T = spanS / maxPoints;
  const n = nRaw > 1 ? Math.floor(spanS / T + 1e-9) + 1 : nRaw;
  const pvSpan = config.pvHi - config.pvLo;
  const sp = new Float64Array(n);
  const pv = new Float64Array(n);
  const mv = new Float64Array(n);
  const e = new Float64Array(n);
  const pvPct = new Float64Array(n);
  const mode = new Uint8Array(n).fill(MODE_UNKNOWN);
  const good = new Uint8Array(n);
  let hasMode = false;
  let gaps = 0;
  let interpolated = 0;
  const gapS = Math.max(GAP_PERIODS * T, 60);
  // Last good values, to hold across bad samples.
  let lastSp = NaN;
  let lastPv = NaN;
  let lastMv = NaN;
  let j = 0;
  const t0 = nRaw > 0 ? samples[0]!.t : 0;
  for (let i = 0; i < n; i++) {
    const t = t0 + i * T;
    while (j + 1 < nRaw && samples[j + 1]!.t <= t + 1e-9 * T) j++;
    const a = samples[j]!;
    const b = j + 1 < nRaw ? samples[j + 1]! : a;
    const aOk = a.quality !== "bad" && Number.isFinite(a.pv) && Number.isFinite(a.mv) && Number.isFinite(a.sp);
    const bOk = b.quality !== "bad" && Number.isFinite(b.pv) && Number.isFinite(b.mv) && Number.isFinite(b.sp);
    const inGap = b !== a && b.t - a.t > gapS;
    if (a.mode !== undefined) {
      hasMode = true;
      mode[i] = a.mode === "auto" ? MODE_AUTO : a.mode === "manual" ? MODE_MANUAL : MODE_CASCADE;
    }
    if (aOk) {
      const f = bOk && b !== a && !inGap ? (t - a.t) / (b.t - a.t) : 0;
      lastSp = a.sp;
      lastPv = a.pv + f * (b.pv - a.pv);
      lastMv = a.mv + f * (b.mv - a.mv);
      good[i] = inGap ? 0 : 1;
    } else {
      good[i] = 0;
    }
    if (inGap) gaps++;
    else if (b !== a && Math.min(t - a.t, b.t - t) > 0.5 * T * (1 + 1e-9)) interpolated++;
    sp[i] = lastSp;
    pv[i] = lastPv;
    mv[i] = lastMv;
  }
  // Leading bad samples: back-fill with the first good value so arrays stay finite.
  const firstGood = good.indexOf(1);
  if (firstGood > 0) for (let i = 0; i < firstGood; i++) {
    sp[i] = sp[firstGood]!;
    pv[i] = pv[firstGood]!;
    mv[i] = mv[firstGood]!;
  }
  if (firstGood < 0) {
    sp.fill(0);
    pv.fill(0);
    mv.fill(0);
  }
  for (let i = 0; i < n; i++) {
    e[i] = (100 * (sp[i]! - pv[i]!)) / pvSpan;
    pvPct[i] = (100 * (pv[i]! - config.pvLo)) / pvSpan;
  }
  let rawBad = 0;
  for (const s of samples) if (s.quality === "bad" || !Number.isFinite(s.pv)) rawBad++;
  return { T, n, sp, pv, mv, e, pvPct, mode, good, hasMode, pvSpan, rawSpacing, samples: nRaw, spanS, badQualityShare: nRaw ? rawBad / nRaw : 0, gapShare: n ? gaps / n : 0, interpolatedShare: n > gaps ? interpolated / (n - gaps) : 0 };
}

/** True where the loop runs in its designed closed-loop mode (auto or cascade), or mode unknown. */
export function isClosed(w: AssessWindow, i: number): boolean {
  const m = w.mode[i]!;
  return m !== MODE_MANUAL;
}

/**
 * Stretches [start, end) of good, closed-loop samples with a constant set point (a move smaller
 * than 0.01 % of span is read as constant), at least `minLength` samples long. With
 * `anySetPoint` the set point may move: stretches of good closed-loop samples only.
 */
export function constantSpStretches(w: AssessWindow, minLength: number, anySetPoint = false): [number, number][] {
  const out: [number, number][] = [];
  const tol = anySetPoint ? Infinity : 1e-4 * w.pvSpan;
  let start = -1;
  for (let i = 0; i <= w.n; i++) {
    const ok = i < w.n && w.good[i] === 1 && isClosed(w, i) && (start < 0 || Math.abs(w.sp[i]! - w.sp[start]!) <= tol);
    if (ok && start < 0) start = i;
    else if (!ok && start >= 0) {
      if (i - start >= minLength) out.push([start, i]);
      start = i < w.n && w.good[i] === 1 && isClosed(w, i) ? i : -1;
    }
  }
  return out;
}
