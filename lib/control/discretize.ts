/**
 * Zero-order-hold (ZOH) discretisation of a continuous transfer function with a dead time.
 *
 * Method (Åström & Wittenmark, *Computer-Controlled Systems*, 3rd ed., 1997, sec. 2.3 "systems with
 * time delay"; Franklin, Powell & Workman, *Digital Control of Dynamic Systems*, 3rd ed., 1998,
 * sec. 4.3): G(s) = num(s)/den(s) (proper) is put in controllable canonical form
 * dx/dt = A x + B u(t - tau), y = C x + D u(t - tau). The dead time tau = N T + f with an integer
 * N >= 0 and 0 <= f < T. Over one period the held input switches at f after the sample, so
 *   x(k+1) = Phi x(k) + Gamma0 u(k - N) + Gamma1 u(k - N - 1),
 *   Phi = e^{AT},  Gamma0 = int_0^{T-f} e^{As} ds B,  Gamma1 = e^{A(T-f)} int_0^f e^{As} ds B,
 * with the integrals taken from the matrix exponential of the augmented matrix [[A, B], [0, 0]]
 * (Van Loan, *Computing integrals involving the matrix exponential*, IEEE TAC 23(3), 1978).
 * The matrix exponential is mathjs `expm` (Padé with scaling and squaring); this is never on the
 * per-sample path.
 *
 * The pulse transfer function: its denominator is det(zI - Phi), with exact integrators kept
 * exact: den(s) = s^k d(s) gives (z - 1)^k det(zI - e^{A_d T}), A_d the companion matrix of d(s),
 * with the constant term adjusted so that den(1) evaluated by Horner's rule is exactly 0.
 * The determinant is the characteristic polynomial of the upper Hessenberg form of the matrix
 * (Householder reduction, then La Budde's recursion; Wilkinson, *The Algebraic Eigenvalue
 * Problem*, 1965, ch. 6) — well conditioned in the matrix entries, unlike products of computed
 * poles when den(s) has repeated roots (a chain of equal lags). The numerator follows from the
 * Markov parameters h_k = C Phi^(k-1) Gamma (Cayley–Hamilton).
 */
import { expm, matrix } from "mathjs";
import { ControlArgumentError, NonFiniteInputError } from "./errors";
import { polyAdd, polyMul, polyScale, trimProperTf } from "./poly";
import type { ContinuousTf, DiscreteTf } from "./types";

/** A dead time within this fraction of a whole number of periods is taken as whole. */
const WHOLE_PERIOD_TOLERANCE = 1e-9;

export interface ZohStateSpace {
  /** Sample period in seconds. */
  T: number;
  /**
   * Full discrete model xi(k+1) = a xi(k) + b u(k), y(k) = c xi(k) + d u(k), with the state
   * xi = [x (plant states, controllable canonical form); u(k-1); ...; u(k-M)] where
   * M = delay.samples + (delay.fraction > 0 ? 1 : 0) delay registers. Its eigenvalues are the
   * plant's e^{lambda T} plus M poles at the origin.
   */
  a: number[][];
  b: number[];
  c: number[];
  d: number;
  /** The plant part: x(k+1) = phi x(k) + gamma0 u(k-N) + gamma1 u(k-N-1), y = c x + d u(k - N - [f > 0]). */
  plant: { phi: number[][]; gamma0: number[]; gamma1: number[]; c: number[]; d: number };
  /** Dead time split: tau = samples * T + fraction * T (0 <= fraction < 1). */
  delay: { seconds: number; samples: number; fraction: number };
}

function validate(tf: ContinuousTf, T: number, delaySeconds: number): { num: number[]; den: number[] } {
  if (!Number.isFinite(T)) throw new NonFiniteInputError("sample period T");
  if (!(T > 0)) throw new ControlArgumentError(`sample period T must be > 0 s (got ${T})`);
  if (!Number.isFinite(delaySeconds)) throw new NonFiniteInputError("dead time");
  if (!(delaySeconds >= 0)) throw new ControlArgumentError(`dead time must be >= 0 s (got ${delaySeconds})`);
  tf.num.forEach((c, i) => {
    if (!Number.isFinite(c)) throw new NonFiniteInputError(`numerator coefficient ${i}`);
  });
  tf.den.forEach((c, i) => {
    if (!Number.isFinite(c)) throw new NonFiniteInputError(`denominator coefficient ${i}`);
  });
  const { num, den } = trimProperTf(tf.num, tf.den, "c2dZoh");
  return { num: num.length === 0 ? [0] : num, den };
}

function splitDelay(delaySeconds: number, T: number): { samples: number; fraction: number } {
  const ratio = delaySeconds / T;
  const nearest = Math.round(ratio);
  if (Math.abs(ratio - nearest) <= WHOLE_PERIOD_TOLERANCE * Math.max(1, ratio)) return { samples: nearest, fraction: 0 };
  const samples = Math.floor(ratio);
  return { samples, fraction: ratio - samples };
}

/** Controllable canonical form of a proper num/den (den with nonzero leading coefficient). */
function canonical(num: number[], den: number[]): { A: number[][]; B: number[]; C: number[]; D: number } {
  const n = den.length - 1;
  const lead = den[0]!;
  const a = den.map((c) => c / lead);
  const b = new Array<number>(n + 1).fill(0);
  for (let i = 0; i < num.length; i++) b[n + 1 - num.length + i] = num[i]! / lead;
  const D = b[0]!;
  const C = new Array<number>(n);
  for (let i = 1; i <= n; i++) C[i - 1] = b[i]! - D * a[i]!;
  const A: number[][] = [];
  for (let r = 0; r < n; r++) {
    const row = new Array<number>(n).fill(0);
    if (r === 0) for (let c = 0; c < n; c++) row[c] = -a[c + 1]!;
    else row[r - 1] = 1;
    A.push(row);
  }
  const B = new Array<number>(n).fill(0);
  if (n > 0) B[0] = 1;
  return { A, B, C, D };
}

/** expm of [[A t, B t], [0, 0]]: returns e^{At} and int_0^t e^{As} ds B. */
function expAugmented(A: number[][], B: number[], t: number): { E: number[][]; G: number[] } {
  const n = A.length;
  if (t === 0) {
    const E = A.map((_, r) => A.map((__, c) => (r === c ? 1 : 0)));
    return { E, G: new Array<number>(n).fill(0) };
  }
  const M: number[][] = [];
  for (let r = 0; r <= n; r++) {
    const row = new Array<number>(n + 1).fill(0);
    if (r < n) {
      for (let c = 0; c < n; c++) row[c] = A[r]![c]! * t;
      row[n] = B[r]! * t;
    }
    M.push(row);
  }
  const X = expm(matrix(M)).toArray() as number[][];
  const E = X.slice(0, n).map((row) => row.slice(0, n));
  const G = X.slice(0, n).map((row) => row[n]!);
  return { E, G };
}

function matVec(M: number[][], v: number[]): number[] {
  return M.map((row) => row.reduce((s, m, i) => s + m * v[i]!, 0));
}

function matMul(X: number[][], Y: number[][]): number[][] {
  return X.map((row) => Y[0]!.map((_, c) => row.reduce((s, x, k) => s + x * Y[k]![c]!, 0)));
}

function dot(a: number[], b: number[]): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i]! * b[i]!;
  return s;
}

/**
 * ZOH discretisation in state-space form, including the dead-time registers (see the module doc
 * and `ZohStateSpace`). Simulators step this model; tests take true closed-loop poles from it.
 * @param tf proper continuous transfer function, descending powers of s.
 * @param T sample period in seconds (> 0).
 * @param delaySeconds dead time in seconds (>= 0; any real value, fractional periods included).
 */
export function c2dZohStateSpace(tf: ContinuousTf, T: number, delaySeconds = 0): ZohStateSpace {
  const { num, den } = validate(tf, T, delaySeconds);
  const { A, B, C, D } = canonical(num, den);
  const n = A.length;
  const { samples, fraction } = splitDelay(delaySeconds, T);
  const f = fraction * T;
  let phi: number[][];
  let gamma0: number[];
  let gamma1: number[];
  if (fraction === 0) {
    const e = expAugmented(A, B, T);
    phi = e.E;
    gamma0 = e.G;
    gamma1 = new Array<number>(n).fill(0);
  } else {
    const e1 = expAugmented(A, B, T - f);
    const e2 = expAugmented(A, B, f);
    phi = n > 0 ? matMul(e1.E, e2.E) : [];
    gamma0 = e1.G;
    gamma1 = matVec(e1.E, e2.G);
  }
  const M = samples + (fraction > 0 ? 1 : 0);
  const size = n + M;
  const a: number[][] = Array.from({ length: size }, () => new Array<number>(size).fill(0));
  const b = new Array<number>(size).fill(0);
  const c = new Array<number>(size).fill(0);
  let d = 0;
  for (let r = 0; r < n; r++) {
    for (let k = 0; k < n; k++) a[r]![k] = phi[r]![k]!;
    c[r] = C[r]!;
  }
  // register j (1..M) sits at index n + j - 1 and holds u(k - j)
  const addInput = (lag: number, gamma: number[]): void => {
    for (let r = 0; r < n; r++) {
      if (lag === 0) b[r]! += gamma[r]!;
      else a[r]![n + lag - 1]! += gamma[r]!;
    }
  };
  addInput(samples, gamma0);
  if (fraction > 0) addInput(samples + 1, gamma1);
  if (M > 0) {
    b[n] = 1;
    for (let j = 2; j <= M; j++) a[n + j - 1]![n + j - 2] = 1;
  }
  const outLag = samples + (fraction > 0 ? 1 : 0);
  if (outLag === 0) d = D;
  else c[n + outLag - 1] = D;
  return {
    T,
    a,
    b,
    c,
    d,
    plant: { phi, gamma0, gamma1, c: C, d: D },
    delay: { seconds: delaySeconds, samples, fraction },
  };
}

/**
 * Zero-order-hold discretisation of G(s) e^{-s tau} (see the module doc for the method).
 * @param tf proper continuous transfer function { num, den }, descending powers of s.
 * @param T sample period in seconds (> 0).
 * @param delaySeconds dead time tau in seconds (>= 0), fractional periods included.
 * @returns { num, den, T } in descending powers of z. `den` is e^{lambda_i T}-monic of degree
 *   n + N (+1 when the delay has a fractional part): the delay appears as extra factors z in
 *   `den`. `num` has its leading zeros removed.
 * @throws ControlArgumentError (improper or zero denominator, T <= 0, negative delay),
 *   NonFiniteInputError.
 */
export function c2dZoh(tf: ContinuousTf, T: number, delaySeconds = 0): DiscreteTf {
  const ss = c2dZohStateSpace(tf, T, delaySeconds);
  const { phi, gamma0, gamma1, c: C, d: D } = ss.plant;
  const n = phi.length;
  const { samples, fraction } = ss.delay;
  const denZ = discreteDenominator(tf, T);
  // Markov parameters h_k = C Phi^(k-1) Gamma, k = 1..n, for both input terms.
  const markov = (gamma: number[]): number[] => {
    const h: number[] = [];
    let v = gamma.slice();
    for (let k = 1; k <= n; k++) {
      h.push(dot(C, v));
      v = matVec(phi, v);
    }
    return h;
  };
  // C (zI - Phi)^{-1} Gamma = (sum_j n_j z^(n-j)) / denZ with n_j = sum_{i<j} d_i h_(j-i).
  const numerator = (h: number[]): number[] => {
    const out = new Array<number>(n + 1).fill(0);
    for (let j = 1; j <= n; j++) {
      let s = 0;
      for (let i = 0; i < j; i++) s += denZ[i]! * h[j - i - 1]!;
      out[j] = s;
    }
    return out; // descending, degree n, leading 0
  };
  let num: number[];
  let den: number[];
  const direct = polyScale(denZ, D);
  if (fraction === 0) {
    num = polyAdd(numerator(markov(gamma0)), direct);
    den = denZ.concat(new Array<number>(samples).fill(0));
  } else {
    const n0 = numerator(markov(gamma0)).slice(1).concat([0]); // z * n0(z), degree n
    const n1 = numerator(markov(gamma1));
    num = polyAdd(polyAdd(n0, n1), direct);
    den = denZ.concat(new Array<number>(samples + 1).fill(0));
  }
  let k = 0;
  while (k < num.length - 1 && num[k] === 0) k++;
  return { num: num.slice(k), den, T };
}

/**
 * det(zI - Phi) for ZOH: exact factors (z - 1) for the exact integrators of den(s) (trailing zero
 * coefficients), times the characteristic polynomial of e^{A_d T} for the rest d(s).
 */
function discreteDenominator(tf: ContinuousTf, T: number): number[] {
  let i = 0;
  while (i < tf.den.length && tf.den[i] === 0) i++;
  let den = tf.den.slice(i);
  let integrators = 0;
  while (den.length > 1 && den[den.length - 1] === 0) {
    den = den.slice(0, -1);
    integrators++;
  }
  let out = [1];
  for (let k = 0; k < integrators; k++) out = polyMul(out, [1, -1]);
  if (den.length > 1) {
    const { A, B } = canonical([0], den);
    const { E } = expAugmented(A, B, T);
    out = polyMul(out, charPoly(E));
  }
  if (integrators > 0) {
    // (z - 1) q(z) formed in floating point sums to ~1e-16 at z = 1, not 0: the constant term is
    // set to minus the left-to-right sum of the others, so Horner's rule at z = 1 (and any
    // summation in that order, e.g. numpy.polyval) gives exactly 0 (a change at the rounding level)
    let s = 0;
    for (let k = 0; k < out.length - 1; k++) s += out[k]!;
    out[out.length - 1] = -s;
  }
  return out;
}

/**
 * Characteristic polynomial det(zI - M) (descending powers, monic) of a small dense matrix:
 * Householder reduction to upper Hessenberg form H, then La Budde's recursion
 * p_k(z) = (z - h_kk) p_(k-1)(z) - sum_(i<k) h_ik (prod_(j=i+1..k) h_(j,j-1)) p_(i-1)(z).
 */
export function charPoly(M: number[][]): number[] {
  const n = M.length;
  const H = M.map((row) => row.slice());
  // Householder reduction to Hessenberg form (similarity transform).
  for (let k = 0; k < n - 2; k++) {
    let alpha = 0;
    for (let r = k + 1; r < n; r++) alpha += H[r]![k]! * H[r]![k]!;
    alpha = Math.sqrt(alpha);
    if (alpha === 0) continue;
    const x0 = H[k + 1]![k]!;
    if (x0 > 0) alpha = -alpha;
    const v = new Array<number>(n).fill(0);
    v[k + 1] = x0 - alpha;
    for (let r = k + 2; r < n; r++) v[r] = H[r]![k]!;
    let vv = 0;
    for (let r = k + 1; r < n; r++) vv += v[r]! * v[r]!;
    if (vv === 0) continue;
    // H <- (I - 2 v v'/vv) H (I - 2 v v'/vv)
    for (let c = 0; c < n; c++) {
      let s = 0;
      for (let r = k + 1; r < n; r++) s += v[r]! * H[r]![c]!;
      s = (2 * s) / vv;
      for (let r = k + 1; r < n; r++) H[r]![c]! -= s * v[r]!;
    }
    for (let r = 0; r < n; r++) {
      let s = 0;
      for (let c = k + 1; c < n; c++) s += H[r]![c]! * v[c]!;
      s = (2 * s) / vv;
      for (let c = k + 1; c < n; c++) H[r]![c]! -= s * v[c]!;
    }
  }
  // La Budde: p[k] is the characteristic polynomial of the leading k x k block.
  const p: number[][] = [[1]];
  for (let k = 1; k <= n; k++) {
    let pk = polyMul([1, -H[k - 1]![k - 1]!], p[k - 1]!);
    let prod = 1;
    for (let i = k - 1; i >= 1; i--) {
      prod *= H[i]![i - 1]!;
      const coef = H[i - 1]![k - 1]! * prod;
      if (coef !== 0) pk = polyAdd(pk, p[i - 1]!.map((x) => -coef * x));
    }
    p.push(pk);
  }
  return p[n]!;
}
