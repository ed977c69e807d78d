/**
 * ARX identification in batch: `fitArx` (least squares over candidate structures, judged by the
 * simulation fit), `estimateDelay` and `simulateArx`. Model and conventions as in `arx.ts`
 * (Ljung, *System Identification: Theory for the User*, 2nd ed., 1999, sec. 4.2 and 16.4).
 */
import { checkInt, checkPeriod } from "./arx";
import { ControlArgumentError, NonFiniteInputError } from "./errors";
import { leastSquares, toNested } from "./linalg";
import type { ArxModel } from "./types";

/**
 * Simulated output of an ARX model driven by u alone (noise-free, zero initial conditions):
 * yhat(k) = -sum a_i yhat(k-i) + sum b_j u(k-nk-j). Values before k = 0 are taken as 0.
 */
export function simulateArx(model: Pick<ArxModel, "a" | "b" | "nk">, u: ArrayLike<number>): Float64Array {
  const n = u.length;
  const out = new Float64Array(n);
  const { a, b, nk } = model;
  for (let k = 0; k < n; k++) {
    let s = 0;
    for (let i = 0; i < a.length; i++) {
      const idx = k - 1 - i;
      if (idx >= 0) s -= a[i]! * out[idx]!;
    }
    for (let j = 0; j < b.length; j++) {
      const idx = k - nk - j;
      if (idx >= 0) s += b[j]! * u[idx]!;
    }
    out[k] = s;
  }
  return out;
}

export interface ArxCandidate {
  na: number;
  nb: number;
  nk: number;
  /** Mean squared one-step residual (y units squared). */
  loss: number;
  /** Value of the selection criterion (FPE in y units squared; AIC dimensionless). */
  criterionValue: number;
  /** NRMSE fit of the simulated output, %. */
  fit: number;
  /** Set when this structure could not be fitted (e.g. collinear regressors). */
  error?: string;
}

export interface ArxFit {
  model: ArxModel;
  /** NRMSE fit of the simulated output: 100 (1 - ||y - yhat|| / ||y - mean(y)||), %. */
  fit: number;
  loss: number;
  criterion: "fpe" | "aic";
  criterionValue: number;
  /** sigma^2 (Phi'Phi)^-1 for [a, b] (sigma^2 = RSS / (N - d)). */
  parameterCovariance: number[][];
  /** Means removed from u and y before fitting (0 when `removeMeans` is false). */
  means: { u: number; y: number };
  /** Number of equations used (samples after the longest candidate's start-up). */
  samplesUsed: number;
  candidates: ArxCandidate[];
}

export interface FitArxOptions {
  /** Sample period, seconds. */
  T: number;
  na: number | readonly number[];
  nb: number | readonly number[];
  nk: number | readonly number[];
  /** "fpe" (default): Akaike's final prediction error V (1 + d/N) / (1 - d/N); "aic": N ln V + 2 d. */
  criterion?: "fpe" | "aic";
  /** Subtract the sample means of u and y first (Ljung 1999 sec. 14.1); default true. */
  removeMeans?: boolean;
}

function asList(name: string, v: number | readonly number[], min: number): number[] {
  const list = typeof v === "number" ? [v] : [...v];
  if (list.length === 0) throw new ControlArgumentError(`${name} must list at least one value`);
  list.forEach((x) => checkInt(name, x, min));
  return list;
}

function checkSignals(u: ArrayLike<number>, y: ArrayLike<number>): void {
  if (u.length !== y.length) throw new ControlArgumentError(`u and y must have the same length (${u.length} vs ${y.length})`);
  for (let i = 0; i < u.length; i++) {
    if (!Number.isFinite(u[i]!)) throw new NonFiniteInputError(`u[${i}]`);
    if (!Number.isFinite(y[i]!)) throw new NonFiniteInputError(`y[${i}]`);
  }
}

function nrmseFit(y: ArrayLike<number>, yhat: ArrayLike<number>): number {
  let mean = 0;
  for (let i = 0; i < y.length; i++) mean += y[i]!;
  mean /= y.length;
  let num = 0;
  let den = 0;
  for (let i = 0; i < y.length; i++) {
    num += (y[i]! - yhat[i]!) ** 2;
    den += (y[i]! - mean) ** 2;
  }
  const fit = 100 * (1 - Math.sqrt(num) / Math.sqrt(den));
  return Number.isFinite(fit) ? fit : -Infinity;
}

/**
 * Batch ARX fit with structure selection (Ljung 1999, sec. 16.4): every combination of the
 * listed na, nb, nk is fitted by least squares (Householder QR on typed arrays) over the same
 * equations (from the longest start-up on), scored by Akaike's FPE or AIC, and the best is
 * returned with its NRMSE fit of the simulated output (zero initial conditions, after mean
 * removal) and the full candidates table. u and y are equally long, sampled every T seconds.
 */
export function fitArx(u: ArrayLike<number>, y: ArrayLike<number>, options: FitArxOptions): ArxFit {
  checkPeriod(options.T);
  checkSignals(u, y);
  const nas = asList("na", options.na, 1);
  const nbs = asList("nb", options.nb, 1);
  const nks = asList("nk", options.nk, 1);
  const criterion = options.criterion ?? "fpe";
  if (criterion !== "fpe" && criterion !== "aic") throw new ControlArgumentError(`criterion must be "fpe" or "aic", got ${String(criterion)}`);
  const N = u.length;
  let start = 0;
  for (const na of nas) for (const nb of nbs) for (const nk of nks) start = Math.max(start, na, nk + nb - 1);
  const m = N - start;
  const maxD = Math.max(...nas) + Math.max(...nbs);
  if (m <= maxD + 1) throw new ControlArgumentError(`fitArx needs more than ${start + maxD + 1} samples, got ${N}`);
  let mu = 0;
  let my = 0;
  if (options.removeMeans ?? true) {
    for (let i = 0; i < N; i++) {
      mu += u[i]!;
      my += y[i]!;
    }
    mu /= N;
    my /= N;
  }
  const uu = new Float64Array(N);
  const yy = new Float64Array(N);
  for (let i = 0; i < N; i++) {
    uu[i] = u[i]! - mu;
    yy[i] = y[i]! - my;
  }
  const target = yy.subarray(start);
  const candidates: ArxCandidate[] = [];
  let best: { cand: ArxCandidate; model: ArxModel; cov: number[][] } | null = null;
  for (const na of nas) {
    for (const nb of nbs) {
      for (const nk of nks) {
        const d = na + nb;
        const X = new Float64Array(m * d);
        for (let r = 0; r < m; r++) {
          const k = start + r;
          for (let i = 0; i < na; i++) X[r * d + i] = -yy[k - 1 - i]!;
          for (let j = 0; j < nb; j++) X[r * d + na + j] = uu[k - nk - j]!;
        }
        try {
          const { beta, residual, xtxInverse } = leastSquares(X, target, m, d);
          let rss = 0;
          for (let i = 0; i < m; i++) rss += residual[i]! ** 2;
          const loss = rss / m;
          const value = criterion === "fpe" ? (loss * (1 + d / m)) / (1 - d / m) : m * Math.log(loss) + 2 * d;
          const model: ArxModel = { a: Array.from(beta.subarray(0, na)), b: Array.from(beta.subarray(na)), nk, T: options.T };
          const fit = nrmseFit(yy, simulateArx(model, uu));
          const cand: ArxCandidate = { na, nb, nk, loss, criterionValue: value, fit };
          candidates.push(cand);
          if (!best || value < best.cand.criterionValue) {
            const s2 = rss / (m - d);
            const cov = toNested(xtxInverse.map((v) => v * s2), d);
            best = { cand, model, cov };
          }
        } catch (e) {
          if (!(e instanceof ControlArgumentError)) throw e;
          candidates.push({ na, nb, nk, loss: NaN, criterionValue: NaN, fit: NaN, error: e.message });
        }
      }
    }
  }
  if (!best) throw new ControlArgumentError("fitArx: no candidate structure could be fitted (the data do not excite the model)");
  return {
    model: best.model,
    fit: best.cand.fit,
    loss: best.cand.loss,
    criterion,
    criterionValue: best.cand.criterionValue,
    parameterCovariance: best.cov,
    means: { u: mu, y: my },
    samplesUsed: m,
    candidates,
  };
}

export interface DelayEstimate {
  /** Chosen delay in samples (>= 1). */
  nk: number;
  /** nk T, seconds. */
  seconds: number;
  /** Loss (mean squared residual) per candidate delay. */
  candidates: { nk: number; loss: number }[];
}

/**
 * Input delay nk (samples, >= minDelay >= 1) by ARX loss over candidate delays: an
 * ARX(na, nb, nk) is fitted for each nk in [minDelay, maxDelay] on the same equations, and the
 * delay with the smallest loss wins (all candidates have na + nb parameters, so this equals
 * the FPE choice; Ljung 1999 sec. 16.4 — the usual "arxstruc"-style search, common practice).
 */
export function estimateDelay(
  u: ArrayLike<number>,
  y: ArrayLike<number>,
  options: { maxDelay: number; na?: number; nb?: number; T: number; minDelay?: number },
): DelayEstimate {
  const minDelay = options.minDelay ?? 1;
  checkInt("minDelay", minDelay, 1);
  checkInt("maxDelay", options.maxDelay, minDelay);
  const nks: number[] = [];
  for (let k = minDelay; k <= options.maxDelay; k++) nks.push(k);
  const fit = fitArx(u, y, { T: options.T, na: options.na ?? 2, nb: options.nb ?? 2, nk: nks, criterion: "fpe" });
  const cands = fit.candidates.map((c) => ({ nk: c.nk, loss: c.loss }));
  return { nk: fit.model.nk, seconds: fit.model.nk * options.T, candidates: cands };
}
