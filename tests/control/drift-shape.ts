/**
 * Is the drift's shape in one window of data? (issue #10, item 3; docs/domain.md §7, "The drift's
 * shape"). An offline tool, not the product: it records the samples the tracker's drift fit
 * (server/tracking/drift-source.ts) took in each run of the rim-forecast harness
 * (./forecast-tracker-mc.ts) and refits them in batch with the drift polynomial in time,
 *   theta(t) = theta0 + theta1 tau + theta2 tau^2,   tau = (t - t_last) / window,
 * by the same instrumental variables ([Z, tau Z, tau^2 Z]; Ljung, *System Identification*, 2nd
 * ed., 1999, sec. 16.1: parameters as known functions of time times constant coefficients; from
 * memory) and the same covariance (the IV sandwich with the residuals' autocovariances over
 * `lags` informative samples, Bartlett weights; Newey & West, *Econometrica* 55(3), 1987), the
 * data whitened by the tracker's final AR noise model (lib/control/drift-noise.ts; one filter for
 * the whole window, where the tracker changes it at every block: an approximation, reported beside
 * the exact replay). On it the forecast rules compared in docs/domain.md §7: the tangent (the
 * product), a curvature test, Akaike-weight model averaging, the radius along theta(t), shorter
 * windows.
 */
import { LinearDriftIv } from "@/lib/control/parameter-drift";
import { chiSquareQuantile, restrictPoleDrift } from "@/lib/control/drift-restriction";
import { driftCrossing } from "@/lib/control/drift-crossing";
import { closedLoopArxInto } from "@/lib/control/closed-loop";
import { invert, sandwich, solveInto } from "@/lib/control/linalg";
import { polyRootsInto } from "@/lib/control/roots";
import type { DriftEstimate } from "@/lib/control/parameter-drift";
import type { QTf } from "@/lib/control/types";
import { RadiusDrift, type RadiusDriftOptions } from "@/server/tracking/drift-source";
import { forecastThroughTracker, makeSim, trueCrossing, type ForecastScenario } from "./forecast-tracker-mc";
import { FakeClock } from "../tracking/helpers";

/** Seconds of simulated time at the harness's clock origin (epoch seconds of FakeClock's start). */
const T0 = new FakeClock().t / 1000;

/** The samples one run's drift fit took, up to the tracker's last forecast before half way. */
export interface DriftStream {
  seed: number;
  /** True crossing, seconds of simulated time; null: no drift. */
  truth: number | null;
  o: RadiusDriftOptions;
  /** Samples (t epoch seconds; per sample phi (d), z (d), y, informative 0/1) and, per index, events before it: "g" gap, "r" reset. */
  t: number[];
  v: number[];
  events: Map<number, string[]>;
  /** The tracker's own forecast (seconds of simulated time) or null. */
  tracker: Forecast;
}

export type Forecast = { at: number; low: number; high: number } | null;

interface Recorded { t: number[]; v: number[]; events: Map<number, string[]> }

/**
 * `runs` seeded runs of `kind` through the tracker, the drift fit's input recorded by wrapping
 * LinearDriftIv's add/gap/reset and RadiusDrift's forecast for the time of the call (restored after).
 */
export function recordDriftStreams(kind: ForecastScenario, runs: number, seed: number): DriftStream[] {
  const fitP = LinearDriftIv.prototype as unknown as Record<string, (...a: unknown[]) => unknown>;
  const srcP = RadiusDrift.prototype as unknown as Record<string, (...a: unknown[]) => unknown>;
  const saved = { add: fitP.add!, gap: fitP.gap!, reset: fitP.reset!, forecast: srcP.forecast! };
  const rec = new WeakMap<object, Recorded>();
  const of = (fit: object) => rec.get(fit) ?? (rec.set(fit, { t: [], v: [], events: new Map() }), rec.get(fit)!);
  const event = (fit: object, e: string) => {
    const r = of(fit);
    r.events.set(r.t.length, [...(r.events.get(r.t.length) ?? []), e]);
  };
  let last: { o: RadiusDriftOptions; fit: object; n: number; res: unknown } | null = null;
  fitP.add = function (this: { replaying: boolean }, ...a: unknown[]) {
    const [t, phi, z, y, informative = true] = a as [number, ArrayLike<number>, ArrayLike<number>, number, boolean];
    if (!this.replaying) {
      const r = of(this);
      r.t.push(t);
      r.v.push(...Array.from(phi), ...Array.from(z), y, informative ? 1 : 0);
    }
    return saved.add.apply(this, a);
  };
  fitP.gap = function (this: { replaying: boolean }) {
    if (!this.replaying) event(this, "g");
    return saved.gap.apply(this);
  };
  fitP.reset = function (this: object) {
    event(this, "r");
    return saved.reset.apply(this);
  };
  srcP.forecast = function (this: { o: RadiusDriftOptions; fit: object }, controller: unknown) {
    const res = saved.forecast.call(this, controller);
    last = { o: { ...this.o, controller: controller as QTf }, fit: this.fit, n: of(this.fit).t.length, res };
    return res;
  };
  const out: DriftStream[] = [];
  try {
    for (let r = 0; r < runs; r++) {
      last = null;
      forecastThroughTracker(kind, 1, seed + r);
      const l = last as { o: RadiusDriftOptions; fit: object; n: number; res: Forecast | undefined } | null;
      if (!l) continue;
      const R = of(l.fit);
      const d = l.o.na + l.o.nb;
      const res = l.res ? { at: l.res.at / 1000 - T0, low: l.res.low / 1000 - T0, high: l.res.high / 1000 - T0 } : null;
      out.push({ seed: seed + r, truth: kind === "no-drift" ? null : trueCrossing(makeSim(kind, seed + r)), o: l.o, t: R.t.slice(0, l.n), v: R.v.slice(0, l.n * (2 * d + 2)), events: R.events, tracker: res });
    }
  } finally {
    Object.assign(fitP, { add: saved.add, gap: saved.gap, reset: saved.reset });
    srcP.forecast = saved.forecast;
  }
  return out;
}

/** Visits the stream's samples in order with its gaps and resets. */
export function visit(s: DriftStream, on: { add: (t: number, phi: number[], z: number[], y: number, inf: boolean) => void; gap: () => void; reset: () => void }): void {
  const d = s.o.na + s.o.nb;
  const w = 2 * d + 2;
  for (let i = 0; i < s.t.length; i++) {
    for (const e of s.events.get(i) ?? []) (e === "g" ? on.gap : on.reset)();
    const v = s.v.slice(i * w, (i + 1) * w);
    on.add(s.t[i]!, v.slice(0, d), v.slice(d, 2 * d), v[2 * d]!, v[2 * d + 1] === 1);
  }
}

/** The tracker's fit replayed from the stream (it must reproduce `tracker`) and its final noise model. */
export function replayTracker(s: DriftStream): { forecast: Forecast; noiseA: Float64Array } {
  const o = s.o;
  const perMemory = o.memoryS / o.T;
  const n = o.noise && o.noise.order > 0 ? o.noise : null;
  const noise = n ? { order: n.order, samples: Math.max(10 * n.order, Math.round(n.memories * perMemory)), settle: Math.round(Math.max(0, Math.min(n.settleMemories ?? 4, n.memories - 1)) * perMemory) } : undefined;
  const fit = new LinearDriftIv({ d: o.na + o.nb, window: o.windowS, block: o.memoryS, lags: o.lags, ...(noise ? { noise } : {}) });
  visit(s, { add: (t, phi, z, y, inf) => fit.add(t, phi, z, y, inf), gap: () => fit.gap(), reset: () => fit.reset() });
  const est = fit.estimate();
  const ok = est && est.t - est.tFirst >= 10 * o.memoryS;
  const f = ok ? driftCrossing(restrictPoleDrift(est, o.na).estimate, o, o.controller) : null;
  return { forecast: f ? { at: f.at - T0, low: f.low - T0, high: f.high - T0 } : null, noiseA: fit.noiseModel.a };
}

/** A batch polynomial drift fit: coefficients x = [theta0, theta1, (theta2)] (d each, tau units) and their covariance. */
export interface PolyDriftFit {
  x: Float64Array;
  P: Float64Array;
  d: number;
  degree: number;
  window: number;
  tLast: number;
  tFirst: number;
  n: number;
}

/** One row of the batch fit: regressor, instruments (p each), output, and the run of consecutive samples it belongs to. */
export interface PolyRow { Phi: Float64Array; Z: Float64Array; y: number; run: number }

/**
 * The IV estimate of the rows (module doc): x = (sum Z Phi')^-1 sum Z y, covariance
 * A^-1 S A^-T n / (n - p), S = sum_l w_l gamma(l) (sum Z_k Z_{k-l}' + its transpose), within runs.
 */
export function polyIv(rows: PolyRow[], lags: number): { x: Float64Array; P: Float64Array } | null {
  const n = rows.length;
  const p = rows[0]?.Phi.length ?? 0;
  if (n < 10 * p) return null;
  const A = new Float64Array(p * p);
  const f = new Float64Array(p);
  for (const r of rows) for (let i = 0; i < p; i++) {
    for (let j = 0; j < p; j++) A[i * p + j]! += r.Z[i]! * r.Phi[j]!;
    f[i]! += r.Z[i]! * r.y;
  }
  const x = new Float64Array(p);
  if (!(solveInto(A, f, p, new Float64Array(p * (p + 1)), x) > 0)) return null;
  const e = rows.map((r) => r.y - r.Phi.reduce((a, v, j) => a + v * x[j]!, 0));
  const S = new Float64Array(p * p);
  for (let l = 0; l <= lags; l++) {
    let ee = 0, m = 0;
    const ZZ = new Float64Array(p * p);
    for (let k = l; k < n; k++) {
      if (rows[k]!.run !== rows[k - l]!.run) continue;
      ee += e[k]! * e[k - l]!;
      m++;
      for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) ZZ[i * p + j]! += rows[k]!.Z[i]! * rows[k - l]!.Z[j]!;
    }
    if (!m) continue;
    const c = ((1 - l / (lags + 1)) * ee) / m;
    for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) S[i * p + j]! += c * (l === 0 ? ZZ[i * p + j]! : ZZ[i * p + j]! + ZZ[j * p + i]!);
  }
  const Ai = invert(A, p);
  return Ai ? { x, P: sandwich(Ai, S, p, n / (n - p)) } : null;
}

/** [v, tau v, tau^2 v, ...] up to `degree`. */
export function timePowers(v: ArrayLike<number>, tau: number, degree: number): Float64Array {
  const d = v.length;
  const o = new Float64Array((degree + 1) * d);
  for (let k = 0; k <= degree; k++) for (let i = 0; i < d; i++) o[k * d + i] = v[i]! * tau ** k;
  return o;
}

/**
 * The stream's batch fit of `degree` over the last `window` seconds (default the tracker's),
 * whitened by the AR coefficients `a` (a_1..a_order; empty: none), as the tracker's fit sums its
 * informative samples: without a noise model the others are ignored, with one they pass through
 * its filter; a gap or reset breaks the filter's and the covariance's runs.
 */
export function polyDriftFit(s: DriftStream, degree: number, a: ArrayLike<number> = [], window = s.o.windowS): PolyDriftFit | null {
  const order = a.length;
  const tLast = s.t[s.t.length - 1]!;
  const rows: PolyRow[] = [];
  let hist: { Phi: Float64Array; Z: Float64Array; y: number }[] = [];
  let run = 0;
  let tFirst = NaN;
  visit(s, {
    reset: () => {
      rows.length = 0;
      hist = [];
      run++;
    },
    gap: () => {
      hist = [];
      run++;
    },
    add: (t, phi, z, y, inf) => {
      if (!order && !inf) return;
      const tau = (t - tLast) / s.o.windowS;
      const cur = { Phi: timePowers(phi, tau, degree), Z: timePowers(z, tau, degree), y };
      hist = [cur, ...hist.slice(0, order)];
      if (hist.length <= order || !inf || t < tLast - window) return;
      const Phi = Float64Array.from(cur.Phi), Z = Float64Array.from(cur.Z);
      let yf = y;
      for (let l = 1; l <= order; l++) {
        const c = a[l - 1]!;
        yf += c * hist[l]!.y;
        for (let j = 0; j < Phi.length; j++) {
          Phi[j]! += c * hist[l]!.Phi[j]!;
          Z[j]! += c * hist[l]!.Z[j]!;
        }
      }
      if (!Number.isFinite(tFirst)) tFirst = t;
      rows.push({ Phi, Z, y: yf, run });
    },
  });
  const r = polyIv(rows, s.o.lags);
  return r ? { ...r, d: s.o.na + s.o.nb, degree, window: s.o.windowS, tLast, tFirst, n: rows.length } : null;
}

/**
 * The minimum-distance restriction of the coefficients `idx` to zero with the fit's own
 * covariance as weight (as lib/control/drift-restriction.ts) and its Wald statistic.
 */
export function restrictZero(f: PolyDriftFit, idx: number[]): { fit: PolyDriftFit; wald: number } {
  const { x, P } = f;
  const p = x.length, k = idx.length;
  const W = invert(Float64Array.from({ length: k * k }, (_, i) => P[idx[Math.floor(i / k)]! * p + idx[i % k]!]!), k);
  if (!W) return { fit: f, wald: NaN };
  const u = idx.map((_, i) => idx.reduce((acc, c, j) => acc + W[i * k + j]! * x[c]!, 0));
  const wald = idx.reduce((acc, c, i) => acc + x[c]! * u[i]!, 0);
  const xr = Float64Array.from(x), Pr = Float64Array.from(P);
  for (let i = 0; i < p; i++) {
    for (let a = 0; a < k; a++) xr[i]! -= P[i * p + idx[a]!]! * u[a]!;
    for (let j = 0; j < p; j++) {
      let acc = 0;
      for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) acc += P[i * p + idx[a]!]! * W[a * k + b]! * P[idx[b]! * p + j]!;
      Pr[i * p + j]! -= acc;
    }
  }
  for (const c of idx) {
    xr[c] = 0;
    for (let j = 0; j < p; j++) Pr[c * p + j] = Pr[j * p + c] = 0;
  }
  return { fit: { ...f, x: xr, P: Pr }, wald };
}

/** The fit at its last sample as the crossing takes it: theta, rate per second and their covariance (the curvature dropped). */
export function tangentEstimate(f: PolyDriftFit): DriftEstimate {
  const { d, window, x } = f;
  const p = x.length, q = 2 * d;
  const G = new Float64Array(q * p);
  for (let i = 0; i < d; i++) {
    G[i * p + i] = 1;
    G[(d + i) * p + d + i] = 1 / window;
  }
  const C = new Float64Array(q * q);
  for (let i = 0; i < q; i++) for (let j = 0; j < q; j++) {
    let acc = 0;
    for (let a = 0; a < p; a++) for (let b = 0; b < p; b++) acc += G[i * p + a]! * f.P[a * p + b]! * G[j * p + b]!;
    C[i * q + j] = acc;
  }
  return { t: f.tLast, tFirst: f.tFirst, samples: f.n, theta: x.slice(0, d), rate: Float64Array.from(x.slice(d, 2 * d), (v) => v / window), covariance: C };
}

/** Closed-loop spectral radius at theta under the stream's controller. */
export function radiusOf(theta: ArrayLike<number>, o: RadiusDriftOptions): number {
  const len = 4 * (o.na + o.nb + o.nk + o.controller.num.length + o.controller.den.length);
  const c = new Float64Array(len), re = new Float64Array(len), im = new Float64Array(len);
  const n = closedLoopArxInto(theta, o.na, o.nb, o.nk, o.controller.num, o.controller.den, c);
  const m = polyRootsInto(c, re, im, n);
  let r = 0;
  for (let i = 0; i < m; i++) r = Math.max(r, Math.hypot(re[i]!, im[i]!));
  return r;
}

/** First time (seconds after the last sample, steps of `step`) at which the radius along the fit's theta(t) reaches 1; null within `horizon`. */
export function pathCrossing(f: PolyDriftFit, o: RadiusDriftOptions, horizon: number, step = 30): number | null {
  const th = new Float64Array(f.d);
  for (let s = 0; s <= horizon; s += step) {
    const tau = s / f.window;
    for (let i = 0; i < f.d; i++) {
      th[i] = 0;
      for (let k = 0; k <= f.degree; k++) th[i]! += f.x[k * f.d + i]! * tau ** k;
    }
    if (radiusOf(th, o) >= 1) return s;
  }
  return null;
}

export { chiSquareQuantile, driftCrossing, T0 };
