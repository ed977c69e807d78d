/**
 * From logged rows to uniformly sampled signals, and detrending.
 *
 * Sampling on the grid t = kT follows the zero-order-hold picture a discrete model assumes
 * (Åström & Wittenmark, *Computer-Controlled Systems*, 3rd ed., 1997, sec. 2.3): the MV is a
 * held, piecewise-constant signal, so u(k) is its exact mean over [kT, (k+1)T) (a step between
 * grid points becomes a partial first value instead of a timing error); PV and SP are measured
 * values, taken at kT by linear interpolation between the logged rows.
 */
import { mean } from "@/lib/assessment/signal";
import { ValidationError } from "@/lib/domain/errors";
import type { StepTestMode, StepTestRow } from "./csv";

/** A time gap longer than this many logged periods stops the analysis (common practice). */
export const MAX_GAP_PERIODS = 10;

export interface UniformSeries {
  /** Period, seconds. */
  T: number;
  mv: Float64Array;
  pv: Float64Array;
  sp: Float64Array | null;
  mode: (StepTestMode | null)[];
}

/**
 * The logged period: the median time step, to 6 significant digits.
 * @throws ValidationError when a gap exceeds MAX_GAP_PERIODS logged periods (names its lines).
 */
export function loggedPeriod(rows: readonly StepTestRow[]): { T: number; irregular: boolean } {
  const dts: number[] = [];
  for (let i = 1; i < rows.length; i++) dts.push(rows[i]!.t - rows[i - 1]!.t);
  const sorted = [...dts].sort((a, b) => a - b);
  const med = sorted[Math.floor(sorted.length / 2)]!;
  const T = Number(med.toPrecision(6));
  for (let i = 1; i < rows.length; i++) {
    const dt = rows[i]!.t - rows[i - 1]!.t;
    if (dt > MAX_GAP_PERIODS * T) {
      throw new ValidationError(
        `Lines ${rows[i - 1]!.line}–${rows[i]!.line}: a gap of ${fmt(dt)} s in a log sampled every ${fmt(T)} s (more than ${MAX_GAP_PERIODS} periods). Upload the parts before and after the gap separately.`,
        { row: rows[i]!.line, column: null, columnName: "t" },
      );
    }
  }
  const off = dts.filter((dt) => Math.abs(dt - T) > 0.25 * T).length;
  return { T, irregular: off > 0.05 * dts.length };
}

/**
 * Resample to period T on the grid kT, k = 0..K-1, K = floor(duration / T) (whole periods only).
 * MV: mean of the held value over [kT, (k+1)T); PV, SP: linear interpolation at kT; mode: the
 * mode in force at kT.
 */
export function resample(rows: readonly StepTestRow[], T: number): UniformSeries {
  if (!(T > 0)) throw new ValidationError(`The resampling period must be > 0 s (got ${T}).`);
  const duration = rows[rows.length - 1]!.t;
  const K = Math.floor(duration / T + 1e-9);
  const mv = new Float64Array(K);
  const pv = new Float64Array(K);
  const hasSp = rows[0]!.sp !== null;
  const sp = hasSp ? new Float64Array(K) : null;
  const mode: (StepTestMode | null)[] = new Array<StepTestMode | null>(K).fill(null);
  // Integral of the held MV from 0 to each row's time.
  const cum = new Float64Array(rows.length);
  for (let i = 1; i < rows.length; i++) cum[i] = cum[i - 1]! + rows[i - 1]!.mv * (rows[i]!.t - rows[i - 1]!.t);
  let j = 0;
  const integral = (t: number): number => {
    while (j + 1 < rows.length && rows[j + 1]!.t <= t) j++;
    return cum[j]! + rows[j]!.mv * (t - rows[j]!.t);
  };
  let i = 0;
  let prevInt = integral(0);
  for (let k = 0; k < K; k++) {
    const t = k * T;
    while (i + 1 < rows.length && rows[i + 1]!.t <= t) i++;
    const a = rows[i]!;
    const b = rows[Math.min(i + 1, rows.length - 1)]!;
    const w = b.t > a.t ? (t - a.t) / (b.t - a.t) : 0;
    pv[k] = a.pv + w * (b.pv - a.pv);
    if (sp) sp[k] = a.sp! + w * (b.sp! - a.sp!);
    mode[k] = a.mode;
    const next = integral((k + 1) * T);
    mv[k] = (next - prevInt) / T;
    prevInt = next;
  }
  return { T, mv, pv, sp, mode };
}

export type DetrendMethod = "initial" | "mean" | "linear";

export interface Detrended {
  u: Float64Array;
  y: Float64Array;
  /** What was subtracted from y at each sample (add it back to plot a simulation). */
  yTrend: Float64Array;
  /** Samples before the first input move (the lead-in the baseline came from). */
  leadIn: number;
  baseline: { mv: number; pv: number };
}

/**
 * Remove the operating point:
 * - `initial` (default, for step tests that start settled): subtract the mean of the lead-in,
 *   the samples before the MV (or SP) first moves, from u and y. Mean removal would be biased
 *   here: the record's mean is not an equilibrium of the plant.
 * - `mean`: subtract the record means (Ljung, *System Identification*, 2nd ed., 1999, sec. 14.1),
 *   for records that do not start settled.
 * - `linear`: subtract a least-squares straight line from each signal (Ljung 1999, sec. 14.1),
 *   for a record with a slow drift and several moves in both directions.
 */
export function detrend(s: UniformSeries, method: DetrendMethod, spans: { mv: number; pv: number }): Detrended {
  const n = s.mv.length;
  const u = new Float64Array(n);
  const y = new Float64Array(n);
  const yTrend = new Float64Array(n);
  const tolU = Math.max(1e-12, 0.002 * spans.mv);
  const tolR = Math.max(1e-12, 0.002 * spans.pv);
  let leadIn = n;
  for (let k = 1; k < n; k++) {
    if (Math.abs(s.mv[k]! - s.mv[0]!) > tolU || (s.sp && Math.abs(s.sp[k]! - s.sp[0]!) > tolR)) {
      leadIn = k;
      break;
    }
  }
  let bu = 0;
  let by = 0;
  if (method === "linear") {
    const lu = lineFit(s.mv);
    const ly = lineFit(s.pv);
    for (let k = 0; k < n; k++) {
      u[k] = s.mv[k]! - (lu.a + lu.b * k);
      yTrend[k] = ly.a + ly.b * k;
      y[k] = s.pv[k]! - yTrend[k]!;
    }
    bu = lu.a;
    by = ly.a;
  } else {
    const m = method === "mean" ? n : Math.max(1, leadIn);
    for (let k = 0; k < m; k++) {
      bu += s.mv[k]!;
      by += s.pv[k]!;
    }
    bu /= m;
    by /= m;
    for (let k = 0; k < n; k++) {
      u[k] = s.mv[k]! - bu;
      y[k] = s.pv[k]! - by;
      yTrend[k] = by;
    }
  }
  return { u, y, yTrend, leadIn, baseline: { mv: bu, pv: by } };
}

function lineFit(x: Float64Array): { a: number; b: number } {
  const n = x.length;
  const kMean = (n - 1) / 2;
  const xm = mean(x);
  let sxy = 0;
  let sxx = 0;
  for (let k = 0; k < n; k++) {
    sxy += (k - kMean) * (x[k]! - xm);
    sxx += (k - kMean) ** 2;
  }
  const b = sxx > 0 ? sxy / sxx : 0;
  return { a: xm - b * kMean, b };
}

function fmt(x: number): string {
  return Number(x.toPrecision(4)).toString();
}
