/**
 * Discrete PID controllers and the closed-loop characteristic polynomial of a sampled loop.
 *
 * Loop convention: u = C(q) (r - y), C(q) = N(q^-1) / D(q^-1) (q^-1 polynomials, ascending powers);
 * plant y = q^-nk B(q^-1)/A(q^-1) u (ARX) or y = num(z)/den(z) u (DiscreteTf, descending powers).
 * Characteristic polynomial (Åström & Wittenmark, *Computer-Controlled Systems*, 3rd ed., 1997,
 * ch. 5; Ljung, *System Identification*, 2nd ed., 1999): A D + q^-nk B N = 0, returned in
 * descending powers of z. Gains are in % of output span per % of measurement span, so plant
 * models must use the same % of span units.
 */
import { ControlArgumentError, NonFiniteInputError, PeriodMismatchError } from "./errors";
import { juryStable } from "./jury";
import { polyAdd, polyEvalComplex, polyMul, qPolyAdd, trimProperTf } from "./poly";
import { polyRoots } from "./roots";
import type { ArxModel, Complex, DiscreteTf, QTf } from "./types";

/** Relative tolerance on equal sample periods. */
const PERIOD_TOLERANCE = 1e-9;

export type ControllerAction = "direct" | "reverse";
export type PidForm = "ideal" | "parallel" | "series";

export interface PidSettings {
  /**
   * Proportional gain (%/%), > 0 (>= 0 in the parallel form). The sign of the loop comes from
   * `action`, never from a negative gain.
   */
  kp: number;
  /** Integral time in seconds (> 0); omit, 0 or Infinity for no integral action. In the parallel form the integral gain is 1/ti (1/s) on its own. */
  ti?: number;
  /** Derivative time in seconds (>= 0; default 0). In the parallel form the derivative gain (s) on its own. */
  td?: number;
  /** Derivative filter time constant in seconds; default td / n. */
  tf?: number;
  /** Derivative filter ratio N (tf = td / N) when `tf` is not given; default 10 (common practice). */
  n?: number;
  /** Sample (execution) period in seconds. */
  T: number;
  /**
   * "reverse" (default): the output rises when the measurement falls below the set point,
   * u = +C (r - y); use it for a process whose gain is positive. "direct": the output rises with
   * the measurement, u = -C (r - y). Either way the returned numerator includes the sign.
   */
  action?: ControllerAction;
  /**
   * "ideal" (default; non-interacting): C(s) = kp (1 + 1/(ti s) + td s / (tf s + 1)).
   * "parallel": C(s) = kp + 1/(ti s) + td s / (tf s + 1) (independent gains).
   * "series" (interacting): C(s) = kp (1 + 1/(ti s)) (1 + td s / (tf s + 1)).
   */
  form?: PidForm;
}

function checkPeriod(T: number): void {
  if (!Number.isFinite(T)) throw new NonFiniteInputError("sample period T");
  if (!(T > 0)) throw new ControlArgumentError(`sample period T must be > 0 s (got ${T})`);
}

/** A PID tuning as loops store it: ti null for no integral action, tf 0 for the default filter (td / 10). */
export interface PidTuning {
  kp: number;
  ti: number | null;
  td: number;
  tf: number;
  action: ControllerAction;
  form: PidForm;
}

/** `discretePid` of a stored tuning at the period T, s. */
export function discretePidOf(tuning: PidTuning, T: number): QTf {
  const { kp, ti, td, tf, action, form } = tuning;
  return discretePid({ kp, ti: ti ?? undefined, td, tf: tf > 0 ? tf : undefined, T, action, form });
}

/**
 * Discrete PID in velocity (incremental) form, u = C(q)(r - y), returned as { num, den, T } in
 * ascending powers of q^-1 with den[0] = 1.
 *
 * Discretisation (Åström & Wittenmark 1997, sec. 8.3; backward differences, which stay stable for
 * any filter time): integral T/(ti (1 - q^-1)) — so with integral action den contains 1 - q^-1
 * (a pole at z = 1); filtered derivative td/(tf + T) (1 - q^-1)/(1 - beta q^-1), beta = tf/(tf + T).
 * A PI gives N = kp[(1 + T/ti) - q^-1], D = 1 - q^-1. Without integral action the positional form
 * is returned (no (1 - q^-1) factor, so no cancelled pole at z = 1).
 */
export function discretePid(settings: PidSettings): QTf {
  const { kp, T } = settings;
  const form: PidForm = settings.form ?? "ideal";
  const action: ControllerAction = settings.action ?? "reverse";
  checkPeriod(T);
  for (const [key, v] of Object.entries({ kp, ti: settings.ti, td: settings.td, tf: settings.tf, n: settings.n })) {
    if (v !== undefined && Number.isNaN(v)) throw new NonFiniteInputError(key);
  }
  if (!Number.isFinite(kp)) throw new NonFiniteInputError("kp");
  if (form === "parallel" ? kp < 0 : !(kp > 0)) {
    throw new ControlArgumentError(
      `kp must be ${form === "parallel" ? ">= 0" : "> 0"} (got ${kp}); set the loop sign with action "direct" | "reverse"`,
    );
  }
  const ti = settings.ti;
  const hasI = ti !== undefined && ti !== 0 && ti !== Infinity;
  if (hasI && !(ti > 0 && Number.isFinite(ti))) throw new ControlArgumentError(`ti must be > 0 s (got ${ti})`);
  const td = settings.td ?? 0;
  if (!(td >= 0) || !Number.isFinite(td)) throw new ControlArgumentError(`td must be >= 0 s (got ${td})`);
  const ratio = settings.n ?? 10;
  if (!(ratio > 0) || !Number.isFinite(ratio)) throw new ControlArgumentError(`derivative filter ratio n must be > 0 (got ${ratio})`);
  const tf = settings.tf ?? td / ratio;
  if (!(tf >= 0) || !Number.isFinite(tf)) throw new ControlArgumentError(`tf must be >= 0 s (got ${tf})`);
  if (action !== "direct" && action !== "reverse") throw new ControlArgumentError(`action must be "direct" or "reverse"`);
  if (form !== "ideal" && form !== "parallel" && form !== "series") {
    throw new ControlArgumentError(`form must be "ideal", "parallel" or "series"`);
  }
  if (form === "parallel" && kp === 0 && !hasI && td === 0) throw new ControlArgumentError("a controller with all gains zero");

  // Each term as a ratio of q^-1 polynomials.
  type Ratio = { num: number[]; den: number[] };
  const iTerm = (gain: number): Ratio => ({ num: [gain * (T / ti!)], den: [1, -1] });
  const beta = tf / (tf + T);
  const dTerm = (gain: number): Ratio => ({ num: [(gain * td) / (tf + T), -(gain * td) / (tf + T)], den: [1, -beta] });
  const add = (x: Ratio, y: Ratio): Ratio => ({
    num: qPolyAdd(polyMul(x.num, y.den), polyMul(y.num, x.den)),
    den: polyMul(x.den, y.den),
  });
  const mul = (x: Ratio, y: Ratio): Ratio => ({ num: polyMul(x.num, y.num), den: polyMul(x.den, y.den) });
  const one: Ratio = { num: [1], den: [1] };

  let c: Ratio;
  if (form === "ideal") {
    c = one;
    if (hasI) c = add(c, iTerm(1));
    if (td > 0) c = add(c, dTerm(1));
    c = { num: c.num.map((x) => kp * x), den: c.den };
  } else if (form === "parallel") {
    c = { num: [kp], den: [1] };
    if (hasI) c = add(c, { num: [T / ti!], den: [1, -1] });
    if (td > 0) c = add(c, dTerm(1));
  } else {
    let pi: Ratio = one;
    if (hasI) pi = add(pi, iTerm(1));
    let pd: Ratio = one;
    if (td > 0) pd = add(pd, dTerm(1));
    c = mul(pi, pd);
    c = { num: c.num.map((x) => kp * x), den: c.den };
  }
  const sign = action === "reverse" ? 1 : -1;
  const num = trimTrailingZeros(c.num.map((x) => sign * x));
  const den = trimTrailingZeros(c.den);
  return { num, den, T };
}

function trimTrailingZeros(p: number[]): number[] {
  let end = p.length;
  while (end > 1 && p[end - 1] === 0) end--;
  return p.slice(0, end);
}

function isArx(plant: ArxModel | DiscreteTf): plant is ArxModel {
  return (plant as ArxModel).a !== undefined;
}

function samePeriod(t1: number, t2: number): boolean {
  return Math.abs(t1 - t2) <= PERIOD_TOLERANCE * Math.max(Math.abs(t1), Math.abs(t2));
}

function checkFinite(p: readonly number[], what: string): void {
  p.forEach((c, i) => {
    if (!Number.isFinite(c)) throw new NonFiniteInputError(`${what}[${i}]`);
  });
}

/**
 * The two parts of the characteristic polynomial P_k(z) = open(z) + k loop(z), both in descending
 * powers of z and of equal length: open = A D (k = 0: the plant and controller poles), loop =
 * q^-nk B N (the path through the plant and the controller). P_1 is the closed loop.
 */
export function closedLoopParts(plant: ArxModel | DiscreteTf, controller: QTf): { open: number[]; loop: number[] } {
  if (!samePeriod(plant.T, controller.T)) throw new PeriodMismatchError(plant.T, controller.T, "plant and controller");
  checkFinite(controller.num, "controller.num");
  checkFinite(controller.den, "controller.den");
  if (controller.den.length === 0 || controller.den[0] === 0) {
    throw new ControlArgumentError("controller.den[0] must be nonzero (a causal controller)");
  }
  if (controller.num.length === 0) throw new ControlArgumentError("controller.num is empty");
  if (isArx(plant)) {
    checkFinite(plant.a, "plant.a");
    checkFinite(plant.b, "plant.b");
    if (!Number.isInteger(plant.nk) || plant.nk < 1) throw new ControlArgumentError(`plant.nk must be an integer >= 1 (got ${plant.nk})`);
    if (plant.b.length === 0) throw new ControlArgumentError("plant.b is empty");
    // q^-1 polynomials, then read as z-descending of the common degree.
    const A = [1, ...plant.a];
    const Bq = new Array<number>(plant.nk).fill(0).concat(plant.b);
    const open = polyMul(A, controller.den);
    const loop = polyMul(Bq, controller.num);
    const len = Math.max(open.length, loop.length);
    const pad = (p: number[]): number[] => p.concat(new Array<number>(len - p.length).fill(0));
    return { open: pad(open), loop: pad(loop) };
  }
  checkFinite(plant.num, "plant.num");
  checkFinite(plant.den, "plant.den");
  const { num, den } = trimProperTf(plant.num, plant.den, "plant");
  // Controller in z: multiply N(q^-1) and D(q^-1) by z^m, m = max degree.
  const m = Math.max(controller.num.length, controller.den.length) - 1;
  const Nz = controller.num.concat(new Array<number>(m + 1 - controller.num.length).fill(0));
  const Dz = controller.den.concat(new Array<number>(m + 1 - controller.den.length).fill(0));
  const open = polyMul(den, Dz);
  const loopRaw = polyMul(num, Nz);
  const loop = new Array<number>(open.length - loopRaw.length).fill(0).concat(loopRaw);
  return { open, loop };
}

/**
 * Closed-loop characteristic polynomial A(q)D(q) + q^-nk B(q)N(q) in descending powers of z
 * (degree max(na + deg D, nk + nb - 1 + deg N) for an ARX plant; deg den + deg D(z) for a
 * DiscreteTf plant). Its roots are the closed-loop poles, including poles at the origin from
 * the dead time.
 * @throws PeriodMismatchError when plant.T and controller.T differ (relative 1e-9).
 */
export function closedLoopPolynomial(plant: ArxModel | DiscreteTf, controller: QTf): number[] {
  if (!isArx(plant)) {
    const { open, loop } = closedLoopParts(plant, controller);
    return polyAdd(open, loop);
  }
  // ARX plant: one pass with plain loops (this runs at every tracker update).
  if (!samePeriod(plant.T, controller.T)) throw new PeriodMismatchError(plant.T, controller.T, "plant and controller");
  const { a, b, nk } = plant;
  const cn = controller.num;
  const cd = controller.den;
  if (!Number.isInteger(nk) || nk < 1) throw new ControlArgumentError(`plant.nk must be an integer >= 1 (got ${nk})`);
  if (b.length === 0) throw new ControlArgumentError("plant.b is empty");
  if (cd.length === 0 || cd[0] === 0) throw new ControlArgumentError("controller.den[0] must be nonzero (a causal controller)");
  if (cn.length === 0) throw new ControlArgumentError("controller.num is empty");
  const len = Math.max(a.length + cd.length, nk + b.length + cn.length - 1);
  const out = new Array<number>(len).fill(0);
  for (let j = 0; j < cd.length; j++) out[j]! += cd[j]!;
  for (let i = 0; i < a.length; i++) for (let j = 0; j < cd.length; j++) out[i + 1 + j]! += a[i]! * cd[j]!;
  for (let i = 0; i < b.length; i++) for (let j = 0; j < cn.length; j++) out[nk + i + j]! += b[i]! * cn[j]!;
  for (let i = 0; i < len; i++) {
    if (!Number.isFinite(out[i]!)) {
      checkFinite(a, "plant.a");
      checkFinite(b, "plant.b");
      checkFinite(cn, "controller.num");
      checkFinite(cd, "controller.den");
      throw new NonFiniteInputError(`closed-loop coefficient ${i}`);
    }
  }
  return out;
}

/**
 * Hot-path form of `closedLoopPolynomial` for an ARX plant: theta = [a1..a_na, b0..b_(nb-1)]
 * (the RLS parameter order; further entries such as an offset are ignored). Writes the
 * z-descending coefficients into `out` and returns their count. Allocation-free. The caller
 * guarantees equal sample periods and finite input.
 */
export function closedLoopArxInto(
  theta: ArrayLike<number>,
  na: number,
  nb: number,
  nk: number,
  ctrlNum: ArrayLike<number>,
  ctrlDen: ArrayLike<number>,
  out: Float64Array,
): number {
  const lenOpen = na + ctrlDen.length;
  const lenLoop = nk + nb + ctrlNum.length - 1;
  const len = Math.max(lenOpen, lenLoop);
  if (out.length < len) throw new ControlArgumentError(`closedLoopArxInto: out needs length >= ${len}`);
  if (na === 2 && nb === 2 && nk === 1 && ctrlDen.length === 2 && ctrlNum.length === 2) {
    // the tracker's common case, ARX(2,2,1) under a PI: the loops below written out, in their
    // order of accumulation (the same rounding, bit for bit)
    const a1 = theta[0]!;
    const a2 = theta[1]!;
    const b0 = theta[2]!;
    const b1 = theta[3]!;
    const d0 = ctrlDen[0]!;
    const d1 = ctrlDen[1]!;
    const n0 = ctrlNum[0]!;
    const n1 = ctrlNum[1]!;
    out[0] = 0 + 1 * d0;
    out[1] = 0 + 1 * d1 + a1 * d0 + b0 * n0;
    out[2] = 0 + a1 * d1 + a2 * d0 + b0 * n1 + b1 * n0;
    out[3] = 0 + a2 * d1 + b1 * n1;
    return 4;
  }
  for (let i = 0; i < len; i++) out[i] = 0;
  for (let i = 0; i <= na; i++) {
    const ai = i === 0 ? 1 : theta[i - 1]!;
    for (let j = 0; j < ctrlDen.length; j++) out[i + j]! += ai * ctrlDen[j]!;
  }
  for (let i = 0; i < nb; i++) {
    const bi = theta[na + i]!;
    for (let j = 0; j < ctrlNum.length; j++) out[nk + i + j]! += bi * ctrlNum[j]!;
  }
  return len;
}

/**
 * Gain headroom: the factor k by which the loop gain (plant gain times controller gain) may be
 * multiplied before a closed-loop pole reaches the unit circle, i.e. the smallest k > 1 at which
 * A D + k q^-nk B N loses stability (a root crosses |z| = 1). Infinity when no k > 1 does (only
 * possible when the loop path has no delay, e.g. a biproper DiscreteTf plant).
 * When the loop is already unstable at k = 1 the result is below 1: the upper end of the highest
 * stable gain interval below 1 (the factor the gain must be reduced below), or 0 when no gain
 * in (0, 1) is stable.
 *
 * Method (exact, not a sweep): a root on the circle, z = e^{jw}, needs k = -open(z)/loop(z) real
 * and positive, i.e. Im(open(z) conj(loop(z))) = 0. On |z| = 1 that is the polynomial
 * H(z) = open(z) z^L loop(1/z) - loop(z) z^L open(1/z) (degree 2L); its unit-circle roots (found
 * with `polyRoots`) give every candidate crossing gain. A candidate counts when the Jury verdict
 * (`juryStable`) changes across it (+-1e-6 relative; a pole that only touches the circle does not
 * count); it is then refined by bisection on the verdict to a relative width of 1e-12. A doubling
 * search up to 1e15 backs up the candidates. Accuracy: about 1e-10 relative.
 */
export function gainHeadroom(plant: ArxModel | DiscreteTf, controller: QTf): number {
  const { open, loop } = closedLoopParts(plant, controller);
  const L = open.length - 1;
  if (L === 0 || loop.every((c) => c === 0)) return Infinity; // no poles, or no loop path
  const rev = (p: number[]): number[] => p.slice().reverse();
  const H = polyAdd(polyMul(open, rev(loop)), polyMul(loop, rev(open)).map((x) => -x));
  const candidates: number[] = [];
  const addCandidate = (z: Complex): void => {
    const lz = polyEvalComplex(loop, z);
    const oz = polyEvalComplex(open, z);
    const l2 = lz.re * lz.re + lz.im * lz.im;
    if (l2 === 0) return;
    // k = -open/loop
    const kRe = -(oz.re * lz.re + oz.im * lz.im) / l2;
    if (kRe > 0 && Number.isFinite(kRe)) candidates.push(kRe);
  };
  addCandidate({ re: 1, im: 0 });
  addCandidate({ re: -1, im: 0 });
  if (H.some((c) => c !== 0) && L > 0) {
    for (const z of polyRoots(H)) {
      const r = Math.hypot(z.re, z.im);
      if (Math.abs(r - 1) > 1e-5 || z.im < 0) continue;
      addCandidate({ re: z.re / r, im: z.im / r });
    }
  }
  const stableAt = (k: number): boolean => juryStable(polyAdd(open, loop.map((x) => k * x)));
  candidates.sort((x, y) => x - y);
  // Bisection on the Jury verdict between lo and hi (verdicts differ at the two ends).
  const bisect = (lo: number, hi: number): number => {
    const sLo = stableAt(lo);
    while ((hi - lo) / hi > 1e-12) {
      const mid = 0.5 * (lo + hi);
      if (stableAt(mid) === sLo) lo = mid;
      else hi = mid;
    }
    return 0.5 * (lo + hi);
  };
  const BRACKET = 1e-6;
  if (stableAt(1)) {
    for (const k of candidates) {
      if (k <= 1) continue;
      const lo = Math.max(1, k * (1 - BRACKET));
      const hi = k * (1 + BRACKET);
      if (stableAt(lo) && !stableAt(hi)) return bisect(lo, hi);
    }
    // Safety net (a candidate missed by the root-finder): doubling search, then bisection.
    let lo = 1;
    for (let hi = 2; hi < 1e15; hi *= 2) {
      if (!stableAt(hi)) return bisect(lo, hi);
      lo = hi;
    }
    return Infinity;
  }
  const below = candidates.filter((k) => k < 1).reverse();
  for (const k of below) {
    const lo = k * (1 - BRACKET);
    const hi = Math.min(1, k * (1 + BRACKET));
    if (stableAt(lo) && !stableAt(hi)) return bisect(lo, hi);
  }
  return 0;
}
