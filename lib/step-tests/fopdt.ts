/**
 * First-order-plus-dead-time (FOPDT) summary of a step test, K e^{-Ls} / (tau s + 1), fitted by
 * output error: the model is simulated from the logged MV and (K, offset) solved by linear least
 * squares for each (tau, L), tau by a coarse scan then golden-section search on log tau, L on a
 * grid of half periods (at most 80 points) then refined by golden-section search. Output error is unbiased under white measurement noise, unlike the
 * equation error of ARX (Ljung, *System Identification*, 2nd ed., 1999, sec. 7.4 and 8.3).
 *
 * Simulation: exact zero-order-hold discretisation of the first-order lag with a fractional dead
 * time L = N T + f, 0 <= f < T (Åström & Wittenmark, *Computer-Controlled Systems*, 3rd ed.,
 * 1997, sec. 2.3): y(k+1) = a y(k) + b0 u(k-N) + b1 u(k-N-1), a = e^{-T/tau},
 * b0 = 1 - e^{-(T-f)/tau}, b1 = e^{-(T-f)/tau} - a (unit gain).
 */
import { mean } from "@/lib/assessment/signal";

export interface FopdtFit {
  /** PV units per MV unit. */
  gain: number;
  timeConstantS: number;
  deadTimeS: number;
  /** PV offset added to the simulation (detrending residue), PV units. */
  offset: number;
  /** NRMSE fit of the simulated output, %. */
  fitPercent: number;
}

/** Unit-gain FOPDT response to u (held over each period T), zero initial state. */
export function simulateFopdt(u: ArrayLike<number>, T: number, tau: number, L: number, out = new Float64Array(u.length)): Float64Array {
  const N = Math.floor(L / T + 1e-9);
  const f = L - N * T;
  const a = Math.exp(-T / tau);
  const e = Math.exp(-(T - f) / tau);
  const b0 = 1 - e;
  const b1 = e - a;
  let y = 0;
  for (let k = 0; k < u.length; k++) {
    out[k] = y;
    const u0 = k - N >= 0 ? u[k - N]! : 0;
    const u1 = k - N - 1 >= 0 ? u[k - N - 1]! : 0;
    y = a * y + b0 * u0 + b1 * u1;
  }
  return out;
}

/**
 * Fit K, tau, L (and an offset) to detrended u, y sampled every T seconds.
 * @param maxDeadTimeS longest dead time searched, seconds.
 * @returns null when the input never moves or no positive time constant fits.
 */
export function fitFopdt(u: Float64Array, y: Float64Array, T: number, maxDeadTimeS: number): FopdtFit | null {
  const n = y.length;
  const duration = n * T;
  const g = new Float64Array(n);
  const { yMean, syy } = meanAndSpread(y);
  // For fixed (tau, L): y ~ K g + c by least squares; returns the residual sum of squares.
  const evaluate = (tau: number, L: number): { rss: number; K: number; c: number } => {
    simulateFopdt(u, T, tau, L, g);
    return fitGainOffset(g, y, yMean, syy);
  };
  const lo = Math.log(T / 4);
  const hi = Math.log(Math.max(T, duration * 5));
  const bestTau = (L: number): { tau: number; rss: number } => {
    // Coarse scan on log tau, then golden-section around the best point.
    let best = { x: lo, rss: Infinity };
    const steps = 16;
    for (let i = 0; i <= steps; i++) {
      const x = lo + ((hi - lo) * i) / steps;
      const r = evaluate(Math.exp(x), L).rss;
      if (r < best.rss) best = { x, rss: r };
    }
    const h = (hi - lo) / steps;
    let a = Math.max(lo, best.x - h);
    let b = Math.min(hi, best.x + h);
    const phi = (Math.sqrt(5) - 1) / 2;
    let x1 = b - phi * (b - a);
    let x2 = a + phi * (b - a);
    let f1 = evaluate(Math.exp(x1), L).rss;
    let f2 = evaluate(Math.exp(x2), L).rss;
    for (let it = 0; it < 22; it++) {
      if (f1 < f2) {
        b = x2;
        x2 = x1;
        f2 = f1;
        x1 = b - phi * (b - a);
        f1 = evaluate(Math.exp(x1), L).rss;
      } else {
        a = x1;
        x1 = x2;
        f1 = f2;
        x2 = a + phi * (b - a);
        f2 = evaluate(Math.exp(x2), L).rss;
      }
    }
    const x = f1 < f2 ? x1 : x2;
    return { tau: Math.exp(x), rss: Math.min(f1, f2) };
  };
  const Lmax = Math.max(0, Math.min(maxDeadTimeS, duration / 2));
  const best = searchDeadTime(bestTau, Lmax, Math.max(T / 2, Lmax / 80), 16, 1e-4 * T);
  if (!best) return null;
  const { K, c, rss } = evaluate(best.fit.tau, best.L);
  if (!Number.isFinite(K) || K === 0) return null;
  return { gain: K, timeConstantS: best.fit.tau, deadTimeS: best.L, offset: c, fitPercent: fitPercent(rss, syy) };
}

export interface IpdtFit {
  /** Ramp rate: PV units per second per MV unit. */
  rate: number;
  deadTimeS: number;
  offset: number;
  fitPercent: number;
}

/**
 * Integrator plus dead time, k e^{-Ls} / s, for a process that ramps after a step (a level, for
 * instance), by output error: exact ZOH response with L = N T + f,
 * y(k+1) = y(k) + k ((T - f) u(k-N) + f u(k-N-1)) (Åström & Wittenmark 1997, sec. 2.3); k and an
 * offset by linear least squares for each L on a grid of quarter periods, then refined.
 */
export function fitIpdt(u: Float64Array, y: Float64Array, T: number, maxDeadTimeS: number): IpdtFit | null {
  const n = y.length;
  const g = new Float64Array(n);
  const { yMean, syy } = meanAndSpread(y);
  const evaluate = (L: number) => {
    const N = Math.floor(L / T + 1e-9);
    const f = L - N * T;
    let acc = 0;
    for (let k = 0; k < n; k++) {
      g[k] = acc;
      acc += (T - f) * (k - N >= 0 ? u[k - N]! : 0) + f * (k - N - 1 >= 0 ? u[k - N - 1]! : 0);
    }
    return fitGainOffset(g, y, yMean, syy);
  };
  const Lmax = Math.max(0, Math.min(maxDeadTimeS, (n * T) / 2));
  const best = searchDeadTime(evaluate, Lmax, Math.max(T / 4, Lmax / 400), 30, 1e-6 * T);
  if (!best) return null;
  const r = best.fit;
  if (!Number.isFinite(r.K) || r.K === 0) return null;
  return { rate: r.K, deadTimeS: best.L, offset: r.c, fitPercent: fitPercent(r.rss, syy) };
}

/**
 * The dead time L in [0, Lmax] whose fit has the least residual sum of squares: a grid of step dL,
 * then golden-section search within one grid step either side of the best grid point, keeping
 * the best point evaluated. null when no L gives a finite residual.
 */
function searchDeadTime<F extends { rss: number }>(
  fitAt: (L: number) => F,
  Lmax: number,
  dL: number,
  maxIterations: number,
  tolerance: number,
): { L: number; fit: F } | null {
  let best: { L: number; fit: F | null; rss: number } = { L: 0, fit: null, rss: Infinity };
  const consider = (L: number, fit: F) => {
    if (fit.rss < best.rss) best = { L, fit, rss: fit.rss };
  };
  for (let L = 0; L <= Lmax + 1e-12; L += dL) consider(L, fitAt(L));
  let a = Math.max(0, best.L - dL);
  let b = Math.min(Lmax, best.L + dL);
  const phi = (Math.sqrt(5) - 1) / 2;
  for (let it = 0; it < maxIterations && b - a > tolerance; it++) {
    const x1 = b - phi * (b - a);
    const x2 = a + phi * (b - a);
    const r1 = fitAt(x1);
    const r2 = fitAt(x2);
    consider(x1, r1);
    consider(x2, r2);
    if (r1.rss < r2.rss) b = x2;
    else a = x1;
  }
  return best.fit && Number.isFinite(best.rss) ? { L: best.L, fit: best.fit } : null;
}

/** NRMSE fit in %: 100 (1 - ||y - y_model|| / ||y - mean y||); -Infinity when y does not move. */
function fitPercent(rss: number, syy: number): number {
  return syy > 0 ? 100 * (1 - Math.sqrt(Math.max(0, rss)) / Math.sqrt(syy)) : -Infinity;
}

/** The mean of `y` and its sum of squared deviations. */
function meanAndSpread(y: Float64Array): { yMean: number; syy: number } {
  const n = y.length;
  const yMean = mean(y);
  let syy = 0;
  for (let k = 0; k < n; k++) syy += (y[k]! - yMean) ** 2;
  return { yMean, syy };
}

/** y ~ K g + c by least squares (given y's mean and spread); returns the residual sum of squares with K and c. */
function fitGainOffset(g: Float64Array, y: Float64Array, yMean: number, syy: number): { rss: number; K: number; c: number } {
  const n = y.length;
  const gm = mean(g);
  let sgg = 0;
  let sgy = 0;
  for (let k = 0; k < n; k++) {
    const d = g[k]! - gm;
    sgg += d * d;
    sgy += d * (y[k]! - yMean);
  }
  if (!(sgg > 0)) return { rss: Infinity, K: 0, c: 0 };
  const K = sgy / sgg;
  return { rss: syy - K * sgy, K, c: yMean - K * gm };
}
