/**
 * The loop's robustness from routine data: the process identified in closed loop by the direct
 * prediction-error method with its delay fixed at the configured dead time, and the peak of the
 * sensitivity function Ms = max |1 / (1 + G C)| of that process with the configured controller.
 *
 * Why this is identifiable at a constant set point (the reason earlier attempts failed): the direct
 * method fits y = G(q) u + H(q) w to PV and MV as if in open loop. Two models give the same
 * predictions on closed-loop data exactly when H2 = H1 (1 + G2 C) / (1 + G1 C) (the loop's noise
 * filter S·H is what the data fix), so without an outside signal the process is identifiable only
 * through the orders of the model set (Söderström & Stoica, System Identification, 1989, sec. 10.5;
 * Ljung, System Identification, 2nd ed., 1999, sec. 13.4; from memory). With the process's delay
 * fixed at nk samples, a wrong G2 makes H2 carry (1 + G2 C)/(1 + G1 C), a factor of degree about
 * nk, which a noise model of low order cannot hold; left free, the delay falls to one sample and
 * the fit explains PV from MV through the controller's inverse (the failure met in
 * docs/assessment-rounds.md, "Sluggishness from the set point's own moves"). The direct method is
 * consistent when the model set holds the true process and noise filter (Ljung 1999, sec. 13.4).
 *
 * Model (ours, the least that holds the plant types of the trade: a lag or two, or an integrator
 * with a lag, behind a delay): on the increments of PV and MV within each stretch (loads that drift
 * or step become stationary; Box & Jenkins' integrated disturbance, common practice),
 *   Δy(k) = q^-nk (b0 + b1 q^-1) / (1 + f1 q^-1 + f2 q^-2) Δu(k) + (1 + c1 q^-1 + c2 q^-2 + c3 q^-3) / (1 + d1 q^-1 + d2 q^-2 + d3 q^-3) w(k),
 * fitted by Levenberg–Marquardt on the one-step prediction errors w (Ljung 1999, sec. 10.2; the
 * Jacobian by sensitivity filters, normalEquations): first with a second-order noise model from three
 * starting process denominators (PROBE iterations each, the best fitted on), then the third order
 * from that fit and from the three starts again; each fit stops when N·ln V improves by less than
 * 0.1 (nothing left of statistical weight); the estimate is the lowest minimum found (the
 * criterion has several minima, one with almost no process gain; docs/assessment-rounds.md,
 * "Aggressive tuning read healthy: the sensitivity peak from a closed-loop fit"). The
 * parameters' covariance is σ² (JᵀJ)⁻¹ (the asymptotic covariance of a prediction-error estimate,
 * Ljung 1999, sec. 9.3), carried to ln Ms by its gradient (delta method, common practice), so the
 * finding rests on a 95 % one-sided lower bound of Ms.
 *
 * Delays of NOISE_ORDER estimation periods or fewer give no figure (see loopMargin), nor do fits
 * whose loop would be unstable with the configured controller (the loop ran stably).
 *
 * The limit: Ms above 2 is poor robustness; Åström & Hägglund (Advanced PID Control, 2006, from
 * memory) design for Ms 1.4 (conservative) to 2.0 (aggressive), and Ms ≤ 2 guarantees a gain margin
 * of at least 2 and a phase margin of at least 29°.
 */
import { discretePid, juryStable } from "@/lib/control";
import { decimate } from "./closed-loop";
import { sensitivityPeak } from "./sensitivity-peak";

export { sensitivityPeak } from "./sensitivity-peak";

export interface LoopMargin {
  /** Sensitivity peak of the identified process with the configured controller. */
  ms: number;
  /** Its 95 % one-sided lower bound (ln Ms less 1.645 standard deviations). */
  msLower: number;
  /** Gain margin of the same loop (null when the phase never crosses −180°). */
  gainMargin: number | null;
  /** The fixed delay in estimation periods, and the estimation period, s. */
  delay: number;
  periodS: number;
  /** Increments used. */
  samples: number;
}

/** Ms at which a loop's robustness is poor (Åström & Hägglund 2006, from memory; see above). */
export const MS_LIMIT = 2;
/** One-sided normal quantile for about 95 % (common practice). */
const Z = 1.645;
/** At most this many increments are fitted (the most recent; a bound on cost, ours). */
const MAX_INCREMENTS = 6000;
/** The delay is kept at no more than this many estimation periods by block means (cost; ours). */
const MAX_DELAY = 12;
/** Prediction errors dropped at the start of each stretch while the filters settle (ours). */
const WARMUP = 30;
const NP = 10;
/** Order of the noise model's numerator and denominator. */
const NOISE_ORDER = 3;
/** Parameters of the model with a second-order noise model (the first stage of the fit). */
const ORDER2 = 8;

interface Segment {
  dy: Float64Array;
  du: Float64Array;
}

/** One-step prediction errors of the model p on every segment, into r; returns the sum of squares. */
function predictionErrors(p: Float64Array, segs: readonly Segment[], nk: number, r: Float64Array): number {
  const b0 = p[0]!, b1 = p[1]!, f1 = p[2]!, f2 = p[3]!;
  const c1 = p[4]!, c2 = p[5]!, d1 = p[6]!, d2 = p[7]!, c3 = p[8]!, d3 = p[9]!;
  let at = 0;
  let ss = 0;
  for (const { dy, du } of segs) {
    let g1 = 0, g2 = 0, v1 = 0, v2 = 0, v3 = 0, w1 = 0, w2 = 0, w3 = 0;
    for (let k = 0; k < dy.length; k++) {
      const ua = k - nk >= 0 ? du[k - nk]! : 0;
      const ub = k - nk - 1 >= 0 ? du[k - nk - 1]! : 0;
      const g = b0 * ua + b1 * ub - f1 * g1 - f2 * g2;
      const v = dy[k]! - g;
      const w = v + d1 * v1 + d2 * v2 + d3 * v3 - c1 * w1 - c2 * w2 - c3 * w3;
      g2 = g1; g1 = g; v3 = v2; v2 = v1; v1 = v; w3 = w2; w2 = w1; w1 = w;
      if (k >= WARMUP) {
        r[at++] = w;
        ss += w * w;
      }
    }
  }
  return ss;
}

/** All roots of 1 + a1 q^-1 + ... within radius ρ (Jury's test on the scaled polynomial). */
function within(a: readonly number[], rho: number): boolean {
  const scaled = [1, ...a.map((v, i) => v / Math.pow(rho, i + 1))];
  try {
    return juryStable(scaled);
  } catch {
    return false;
  }
}

function admissible(p: Float64Array): boolean {
  // The process may hold an integrator (a root on the unit circle); the noise model must be invertible.
  return p.every(Number.isFinite) && within([p[2]!, p[3]!], 1.001) && within([p[4]!, p[5]!, p[8]!], 0.995) && within([p[6]!, p[7]!, p[9]!], 1.001);
}

/** Solves the small symmetric system A x = b (Gauss–Jordan with partial pivoting); null if singular. */
function solve(A: Float64Array, b: Float64Array, n: number): Float64Array | null {
  const M = new Float64Array(n * (n + 1));
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) M[i * (n + 1) + j] = A[i * n + j]!;
    M[i * (n + 1) + n] = b[i]!;
  }
  for (let c = 0; c < n; c++) {
    let piv = c;
    for (let i = c + 1; i < n; i++) if (Math.abs(M[i * (n + 1) + c]!) > Math.abs(M[piv * (n + 1) + c]!)) piv = i;
    if (!(Math.abs(M[piv * (n + 1) + c]!) > 1e-300)) return null;
    if (piv !== c) for (let j = 0; j <= n; j++) [M[c * (n + 1) + j], M[piv * (n + 1) + j]] = [M[piv * (n + 1) + j]!, M[c * (n + 1) + j]!];
    for (let i = 0; i < n; i++) {
      if (i === c) continue;
      const m = M[i * (n + 1) + c]! / M[c * (n + 1) + c]!;
      if (m === 0) continue;
      for (let j = c; j <= n; j++) M[i * (n + 1) + j] = M[i * (n + 1) + j]! - m * M[c * (n + 1) + j]!;
    }
  }
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) x[i] = M[i * (n + 1) + n]! / M[i * (n + 1) + i]!;
  return x.every(Number.isFinite) ? x : null;
}

/**
 * JᵀJ and Jᵀr of the prediction errors, the Jacobian by its sensitivity filters (Ljung 1999, sec.
 * 10.2, from memory): with g = q^-nk B/F Δu, v = Δy − g and C w = D v,
 *   ∂w/∂b_i = −(D/C) q^-(nk+i) Δu/F, ∂w/∂f_i = (D/C) q^-i g/F, ∂w/∂c_i = −q^-i w/C, ∂w/∂d_i = q^-i v/C.
 * Only the first NP parameters are fitted (NP = 8: the noise model of second order).
 */
function normalEquations(p: Float64Array, segs: readonly Segment[], nk: number, r: Float64Array, m: number, NP: number): { A: Float64Array; g: Float64Array } {
  const b0 = p[0]!, b1 = p[1]!, f1 = p[2]!, f2 = p[3]!;
  const c1 = p[4]!, c2 = p[5]!, d1 = p[6]!, d2 = p[7]!, c3 = p[8]!, d3 = p[9]!;
  const A = new Float64Array(NP * NP);
  const grad = new Float64Array(NP);
  const row = new Float64Array(10);
  let at = 0;
  for (const { dy, du } of segs) {
    const n = dy.length;
    // every signal padded with O zeros in front, so lagged reads need no bounds checks
    const O = nk + 4;
    const L = n + O;
    const [u, uFd] = scratch(L, O);
    u.set(du, O);
    // the filters' recent values as locals (x1 = x at k − 1, ...); only Δu and its D/(C F) filter
    // are read nk samples back and kept whole (the arithmetic is the same, term by term)
    let g1 = 0, g2 = 0, v1 = 0, v2 = 0, v3 = 0, w1 = 0, w2 = 0, w3 = 0;
    let wC1 = 0, wC2 = 0, wC3 = 0, vC1 = 0, vC2 = 0, vC3 = 0;
    let uF1 = 0, uF2 = 0, uF3 = 0, gF1 = 0, gF2 = 0, gF3 = 0, gFd1 = 0, gFd2 = 0, gFd3 = 0;
    for (let k = O; k < L; k++) {
      const g = b0 * u[k - nk]! + b1 * u[k - nk - 1]! - f1 * g1 - f2 * g2;
      const v = dy[k - O]! - g;
      const w = v + d1 * v1 + d2 * v2 + d3 * v3 - c1 * w1 - c2 * w2 - c3 * w3;
      // 1/C on w and v, 1/F on Δu and g, then D/C on the latter two
      const wc = w - c1 * wC1 - c2 * wC2 - c3 * wC3;
      const vc = v - c1 * vC1 - c2 * vC2 - c3 * vC3;
      const uf = u[k]! - f1 * uF1 - f2 * uF2;
      const gf = g - f1 * gF1 - f2 * gF2;
      uFd[k] = uf + d1 * uF1 + d2 * uF2 + d3 * uF3 - c1 * uFd[k - 1]! - c2 * uFd[k - 2]! - c3 * uFd[k - 3]!;
      const gfd = gf + d1 * gF1 + d2 * gF2 + d3 * gF3 - c1 * gFd1 - c2 * gFd2 - c3 * gFd3;
      if (k - O >= WARMUP) {
        row[0] = -uFd[k - nk]!;
        row[1] = -uFd[k - nk - 1]!;
        row[2] = gFd1;
        row[3] = gFd2;
        row[4] = -wC1;
        row[5] = -wC2;
        row[6] = vC1;
        row[7] = vC2;
        row[8] = -wC3;
        row[9] = vC3;
        const rk = r[at++]!;
        for (let i = 0; i < NP; i++) {
          const ji = row[i]!;
          grad[i] = grad[i]! + ji * rk;
          for (let j = i; j < NP; j++) A[i * NP + j] = A[i * NP + j]! + ji * row[j]!;
        }
      }
      g2 = g1; g1 = g; v3 = v2; v2 = v1; v1 = v; w3 = w2; w2 = w1; w1 = w;
      wC3 = wC2; wC2 = wC1; wC1 = wc; vC3 = vC2; vC2 = vC1; vC1 = vc;
      uF3 = uF2; uF2 = uF1; uF1 = uf; gF3 = gF2; gF2 = gF1; gF1 = gf; gFd3 = gFd2; gFd2 = gFd1; gFd1 = gfd;
    }
  }
  if (at !== m) throw new Error("prediction errors and sensitivities out of step");
  for (let i = 0; i < NP; i++) for (let j = 0; j < i; j++) A[i * NP + j] = A[j * NP + i]!;
  return { A, g: grad };
}

/**
 * The two signal buffers of at least L samples normalEquations keeps whole (Δu and its filtered
 * copy, read nk samples back), reused between calls (a fit calls it up to about a hundred times;
 * fresh arrays each time were most of its garbage), their first O samples zero (the padding);
 * every later sample is written before it is read.
 */
type Buffers = [Float64Array, Float64Array];
let buffers: Buffers = [new Float64Array(0), new Float64Array(0)];
function scratch(L: number, O: number): Buffers {
  if (buffers[0].length < L) {
    const size = Math.max(L, 2 * buffers[0].length);
    buffers = buffers.map(() => new Float64Array(size)) as Buffers;
  }
  for (const b of buffers) b.fill(0, 0, O);
  return buffers;
}

/** Levenberg–Marquardt from p0; the fitted parameters, their residual sum and JᵀJ there. */
function fit(p0: Float64Array, segs: readonly Segment[], nk: number, m: number, maxIterations: number, NP: number): { p: Float64Array; ss: number; A: Float64Array } | null {
  let p = p0;
  const r = new Float64Array(m);
  let ss = predictionErrors(p, segs, nk, r);
  if (!Number.isFinite(ss)) return null;
  let lambda = 1e-3;
  let ne = normalEquations(p, segs, nk, r, m, NP);
  const rt = new Float64Array(m);
  for (let it = 0; it < maxIterations; it++) {
    const A = ne.A.slice();
    for (let i = 0; i < NP; i++) A[i * NP + i] = A[i * NP + i]! * (1 + lambda) + 1e-12;
    const step = solve(A, ne.g.map((v) => -v), NP);
    if (!step) return null;
    const q = p.map((v, i) => (i < NP ? v + step[i]! : v));
    const sq = admissible(q) ? predictionErrors(q, segs, nk, rt) : Infinity;
    if (sq < ss) {
      const gain = (ss - sq) / ss;
      p = q;
      ss = sq;
      r.set(rt);
      lambda = Math.max(1e-9, lambda / 10);
      ne = normalEquations(p, segs, nk, r, m, NP);
      // the criterion N·ln V moved by less than 0.1: statistically nothing left to gain (ours)
      if (gain * m < 0.1) break;
    } else {
      lambda *= 10;
      if (lambda > 1e8) break;
    }
  }
  return { p, ss, A: ne.A };
}

export interface LoopMarginInput {
  /** PV in % of span and MV in %, at the export's spacing T. */
  pv: Float64Array;
  mv: Float64Array;
  stretches: readonly [number, number][];
  T: number;
  deadTimeS: number;
  controller: { kp: number; ti: number | null; td: number; tf?: number; action: "reverse" | "direct"; form?: "ideal" | "parallel" | "series" };
}

/** The sensitivity peak of the loop from routine data (see above); null when it cannot be estimated. */
export function loopMargin(x: LoopMarginInput): LoopMargin | null {
  const raw = Math.floor(x.deadTimeS / x.T) + 1;
  // Block means keep the fixed delay at MAX_DELAY periods or fewer; the process's delay in blocks
  // is rounded down, so the model's delay never exceeds the true one.
  const d = Math.max(1, Math.ceil(raw / MAX_DELAY));
  const Te = x.T * d;
  const nk = Math.floor(x.deadTimeS / Te) + 1;
  // A wrong process changes the noise filter the data fix by (1 + G2 C)/(1 + G1 C) = 1 + O(q^-nk); a
  // noise model with NOISE_ORDER free lags in its numerator absorbs a change that starts that early,
  // so the delay must lie beyond them (the identifiability argument above).
  if (nk <= NOISE_ORDER) return null;
  const segs: Segment[] = [];
  let total = 0;
  for (let s = x.stretches.length - 1; s >= 0 && total < MAX_INCREMENTS; s--) {
    const [a0, b] = x.stretches[s]!;
    // the most recent part of the stretch that the bound still admits
    const a = Math.max(a0, b - (MAX_INCREMENTS - total + WARMUP + 1) * d);
    const y = decimate(x.pv.subarray(a, b), d);
    const u = decimate(x.mv.subarray(a, b), d);
    if (y.length < 4 * WARMUP) continue;
    const dy = new Float64Array(y.length - 1);
    const du = new Float64Array(y.length - 1);
    let my = 0, mu = 0;
    for (let i = 1; i < y.length; i++) {
      my += dy[i - 1] = y[i]! - y[i - 1]!;
      mu += du[i - 1] = u[i]! - u[i - 1]!;
    }
    my /= dy.length;
    mu /= du.length;
    for (let i = 0; i < dy.length; i++) {
      dy[i] = dy[i]! - my;
      du[i] = du[i]! - mu;
    }
    segs.push({ dy, du });
    total += dy.length - WARMUP;
  }
  if (total < 500) return null;
  const c = x.controller;
  let pid;
  try {
    pid = discretePid({ kp: c.kp, ...(c.ti !== null ? { ti: c.ti } : {}), td: c.td, ...(c.tf ? { tf: c.tf } : {}), T: Te, action: c.action, form: c.form });
  } catch {
    return null;
  }
  const fitted = fitPeak(segs, total, nk, pid, c.action === "reverse" ? 1 : -1);
  return fitted ? { ...fitted, delay: nk, periodS: Te, samples: total } : null;
}

interface FittedPeak {
  ms: number;
  msLower: number;
  gainMargin: number | null;
}

/** The prediction-error fit and its sensitivity peak with the 95 % lower bound. */
function fitPeak(segs: readonly Segment[], total: number, nk: number, pid: { num: number[]; den: number[] }, sign: number): FittedPeak | null {
  let best: { p: Float64Array; ss: number; A: Float64Array } | null = null;
  for (const [f1, f2] of STARTS) {
    const r = fit(new Float64Array([0.01 * sign, 0, f1, f2, 0, 0, 0, 0, 0, 0]), segs, nk, total, PROBE, ORDER2);
    if (r && (!best || r.ss < best.ss)) best = r;
  }
  if (!best) return null;
  // the best of the three starts, fitted on to convergence, then with the noise model's third order
  best = fit(best.p, segs, nk, total, 30, ORDER2) ?? best;
  const warm = fit(best.p, segs, nk, total, 30, NP);
  // and from the three starts with the full noise model (the prediction-error estimate is the lowest of the minima found)
  let cold: { p: Float64Array; ss: number; A: Float64Array } | null = null;
  for (const [f1, f2] of STARTS) {
    const r = fit(new Float64Array([0.01 * sign, 0, f1, f2, 0, 0, 0, 0, 0, 0]), segs, nk, total, PROBE, NP);
    if (r && (!cold || r.ss < cold.ss)) cold = r;
  }
  if (cold) cold = fit(cold.p, segs, nk, total, 30, NP) ?? cold;
  const full = cold !== null && (warm === null || cold.ss < warm.ss) ? cold : warm;
  if (!full) return null;
  const p = full.p;
  const peak = (q: Float64Array) => sensitivityPeak([q[0]!, q[1]!], [1, q[2]!, q[3]!], nk, pid.num, pid.den);
  const { ms, gainMargin } = peak(p);
  if (!Number.isFinite(ms)) return null;
  // A closed loop that the fit makes unstable contradicts the data (the loop ran stably): no figure.
  if (gainMargin !== null && gainMargin < 1) return null;
  const cov = invertSym(full.A);
  if (!cov) return null;
  const s2 = full.ss / (total - NP);
  const grad = new Float64Array(NP);
  for (let i = 0; i < 4; i++) {
    const h = 1e-5 * Math.max(1e-3, Math.abs(p[i]!));
    const q = p.slice();
    q[i] = q[i]! + h;
    grad[i] = (Math.log(peak(q).ms) - Math.log(ms)) / h;
  }
  let v = 0;
  for (let i = 0; i < NP; i++) for (let j = 0; j < NP; j++) v += grad[i]! * cov[i * NP + j]! * grad[j]!;
  const sd = Math.sqrt(Math.max(0, s2 * v));
  return { ms, msLower: ms * Math.exp(-Z * sd), gainMargin };
}

/** Starting denominators of the process: one slow lag, a double lag, a near-integrator (ours). */
/** Iterations from each start before the best one is fitted on (ours, a bound on cost). */
const PROBE = 4;
const STARTS = [[-0.9, 0], [-1.5, 0.5625], [-1.9, 0.9025]] as const;

function invertSym(A: Float64Array): Float64Array | null {
  const out = new Float64Array(NP * NP);
  for (let j = 0; j < NP; j++) {
    const e = new Float64Array(NP);
    e[j] = 1;
    const col = solve(A, e, NP);
    if (!col) return null;
    for (let i = 0; i < NP; i++) out[i * NP + j] = col[i]!;
  }
  return out;
}
