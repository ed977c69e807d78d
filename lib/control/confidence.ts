/**
 * Uncertainty of polynomial roots (poles) from the uncertainty of the coefficients, by the
 * delta method (first-order error propagation; e.g. Ljung, *System Identification*, 2nd ed.,
 * 1999, sec. 9.4 for propagating parameter covariance to derived quantities).
 *
 * For a simple root z_i of p(z) = sum_k c_k z^(n-k) (z-descending coefficients, implicit
 * function theorem):   dz_i/dc_k = -z_i^(n-k) / p'(z_i),
 * and for the radius   d|z_i|/dc_k = Re(conj(z_i) dz_i/dc_k) / |z_i|.
 * The linearisation fails near repeated roots (p'(z_i) -> 0): such roots are flagged
 * `reliable: false` when the root's own standard deviation reaches half the distance to the
 * nearest other root.
 */
import { PeriodMismatchError, ControlArgumentError, NonFiniteInputError } from "./errors";
import { polyRoots } from "./roots";
import type { ArxModel, Complex, QTf } from "./types";

/**
 * Standard normal quantile Phi^-1(p), 0 < p < 1 (P. J. Acklam's rational approximation,
 * relative error below 1.2e-9).
 */
export function normalQuantile(p: number): number {
  if (!(p > 0 && p < 1)) throw new ControlArgumentError(`probability must be in (0, 1), got ${p}`);
  const a = [-3.969683028665376e1, 2.209460984245205e2, -2.759285104469687e2, 1.38357751867269e2, -3.066479806614716e1, 2.506628277459239];
  const b = [-5.447609879822406e1, 1.615858368580409e2, -1.556989798598866e2, 6.680131188771972e1, -1.328068155288572e1];
  const c = [-7.784894002430293e-3, -3.223964580411365e-1, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783];
  const d = [7.784695709041462e-3, 3.224671290700398e-1, 2.445134137142996, 3.754408661907416];
  const pl = 0.02425;
  let x: number;
  if (p < pl) {
    const q = Math.sqrt(-2 * Math.log(p));
    x = (((((c[0]! * q + c[1]!) * q + c[2]!) * q + c[3]!) * q + c[4]!) * q + c[5]!) / ((((d[0]! * q + d[1]!) * q + d[2]!) * q + d[3]!) * q + 1);
  } else if (p <= 1 - pl) {
    const q = p - 0.5;
    const r = q * q;
    x = ((((((a[0]! * r + a[1]!) * r + a[2]!) * r + a[3]!) * r + a[4]!) * r + a[5]!) * q) / (((((b[0]! * r + b[1]!) * r + b[2]!) * r + b[3]!) * r + b[4]!) * r + 1);
  } else {
    const q = Math.sqrt(-2 * Math.log(1 - p));
    x = -(((((c[0]! * q + c[1]!) * q + c[2]!) * q + c[3]!) * q + c[4]!) * q + c[5]!) / ((((d[0]! * q + d[1]!) * q + d[2]!) * q + d[3]!) * q + 1);
  }
  return x;
}

export interface RootConfidence {
  root: Complex;
  /** |z|, dimensionless. */
  radius: number;
  /** Delta-method standard deviation of |z| (Infinity when p'(z) = 0). */
  radiusStd: number;
  /** Two-sided interval of the radius at the requested confidence: radius -/+ q * radiusStd. */
  radiusInterval: [number, number];
  /** Covariance of (Re z, Im z): [[var Re, cov], [cov, var Im]]. */
  covariance: [[number, number], [number, number]];
  /** Confidence ellipse of (Re z, Im z): semi-axes and orientation (radians from the Re axis). */
  ellipse: { semiMajor: number; semiMinor: number; angle: number };
  /** Distance to the nearest other root (Infinity for a single root). */
  separation: number;
  /** False near a repeated root, where the first-order propagation is not trustworthy. */
  reliable: boolean;
}

export interface PoleConfidenceOptions {
  /** Confidence level of the intervals and ellipses, default 0.95. */
  confidence?: number;
  /** Roots of `coeffs` if already computed (skips the root finder). */
  roots?: Complex[];
}

/**
 * Per-root uncertainty of p(z) = coeffs (z-descending, degree n >= 1) given the coefficient
 * covariance: either (n+1) x (n+1) for c0..cn, or n x n for c1..cn with c0 fixed (the monic
 * ARX or closed-loop case). Returns one entry per root, in the order of `polyRoots`.
 */
export function poleConfidence(
  coeffs: readonly number[],
  coefficientCovariance: readonly (readonly number[])[],
  options: PoleConfidenceOptions = {},
): RootConfidence[] {
  const n = coeffs.length - 1;
  if (n < 1) throw new ControlArgumentError("poleConfidence needs a polynomial of degree >= 1");
  coeffs.forEach((c, i) => {
    if (!Number.isFinite(c)) throw new NonFiniteInputError(`coeffs[${i}]`);
  });
  if (coeffs[0] === 0) throw new ControlArgumentError("leading coefficient must be non-zero");
  const m = coefficientCovariance.length;
  if (m !== n + 1 && m !== n) throw new ControlArgumentError(`coefficient covariance must be ${n + 1} x ${n + 1} or ${n} x ${n}, got ${m} rows`);
  const offset = n + 1 - m;
  coefficientCovariance.forEach((row, i) => {
    if (row.length !== m) throw new ControlArgumentError(`coefficient covariance row ${i} must have ${m} entries`);
    row.forEach((v, j) => {
      if (!Number.isFinite(v)) throw new NonFiniteInputError(`coefficientCovariance[${i}][${j}]`);
    });
  });
  const conf = options.confidence ?? 0.95;
  if (!(conf > 0 && conf < 1)) throw new ControlArgumentError(`confidence must be in (0, 1), got ${conf}`);
  const q = normalQuantile(0.5 + conf / 2);
  const chi2 = -2 * Math.log(1 - conf); // chi-square quantile with 2 degrees of freedom
  const roots = options.roots ?? polyRoots([...coeffs]);
  if (roots.length !== n) throw new ControlArgumentError(`expected ${n} roots, got ${roots.length}`);

  return roots.map((z, i) => {
    // p'(z) by Horner on the derivative coefficients.
    let dre = 0;
    let dim = 0;
    for (let k = 0; k < n; k++) {
      const ck = coeffs[k]! * (n - k);
      const re = dre * z.re - dim * z.im + ck;
      const im = dre * z.im + dim * z.re;
      dre = re;
      dim = im;
    }
    const den = dre * dre + dim * dim;
    // dz/dc_k = -z^(n-k) / p'(z) for k = offset..n; powers from z^0 (k = n) upward.
    const gRe = new Float64Array(m);
    const gIm = new Float64Array(m);
    let pre = 1;
    let pim = 0;
    for (let k = n; k >= offset; k--) {
      // -(pre + j pim) / (dre + j dim)
      const re = -(pre * dre + pim * dim) / den;
      const im = -(pim * dre - pre * dim) / den;
      gRe[k - offset] = re;
      gIm[k - offset] = im;
      const nre = pre * z.re - pim * z.im;
      pim = pre * z.im + pim * z.re;
      pre = nre;
    }
    let vrr = 0;
    let vri = 0;
    let vii = 0;
    for (let a = 0; a < m; a++) {
      const row = coefficientCovariance[a]!;
      for (let b = 0; b < m; b++) {
        const s = row[b]!;
        vrr += gRe[a]! * s * gRe[b]!;
        vri += gRe[a]! * s * gIm[b]!;
        vii += gIm[a]! * s * gIm[b]!;
      }
    }
    const radius = Math.hypot(z.re, z.im);
    let radiusVar: number;
    if (radius > 0) {
      const ur = z.re / radius;
      const ui = z.im / radius;
      radiusVar = ur * ur * vrr + 2 * ur * ui * vri + ui * ui * vii;
    } else {
      radiusVar = Math.max(vrr, vii);
    }
    const radiusStd = den > 0 ? Math.sqrt(Math.max(0, radiusVar)) : Infinity;
    // 2x2 eigen-decomposition for the ellipse.
    const tr = vrr + vii;
    const disc = Math.sqrt(Math.max(0, ((vrr - vii) / 2) ** 2 + vri * vri));
    const l1 = Math.max(0, tr / 2 + disc);
    const l2 = Math.max(0, tr / 2 - disc);
    const angle = 0.5 * Math.atan2(2 * vri, vrr - vii);
    let separation = Infinity;
    roots.forEach((w, j) => {
      if (j !== i) separation = Math.min(separation, Math.hypot(w.re - z.re, w.im - z.im));
    });
    const finite = den > 0 && Number.isFinite(vrr) && Number.isFinite(vii);
    return {
      root: { re: z.re, im: z.im },
      radius,
      radiusStd,
      radiusInterval: [radius - q * radiusStd, radius + q * radiusStd] as [number, number],
      covariance: [
        [vrr, vri],
        [vri, vii],
      ] as [[number, number], [number, number]],
      ellipse: { semiMajor: Math.sqrt(chi2 * l1), semiMinor: Math.sqrt(chi2 * l2), angle },
      separation,
      reliable: finite && Math.sqrt(l1) < 0.5 * separation,
    };
  });
}

/**
 * Closed-loop characteristic coefficients and their covariance from an ARX plant estimate and a
 * known controller C = N(q)/D(q) (q^-1 polynomials, `discretePid` form):
 *   c(q^-1) = A(q) D(q) + q^-nk B(q) N(q)   (Åström & Wittenmark, *Computer-Controlled Systems*, 3rd ed., 1997, ch. 5)
 * c is affine in theta = [a1..a_na, b0..b_{nb-1}]: dc/da_i = q^-i D, dc/db_j = q^-(nk+j) N, so
 * cov(c) = J cov(theta) J'. `coeffs` are z-descending of degree L - 1 (the q^-1 list read as
 * z-descending after multiplying by z^(L-1)); trailing zeros (poles at the origin) are kept so
 * that `coeffs` and `covariance` stay aligned. The leading coefficient does not depend on theta.
 */
export function closedLoopCoefficientCovariance(
  model: ArxModel,
  controller: QTf,
  parameterCovariance: readonly (readonly number[])[],
): { coeffs: number[]; covariance: number[][]; jacobian: number[][] } {
  if (model.T !== controller.T) throw new PeriodMismatchError(model.T, controller.T, "plant model and controller");
  const na = model.a.length;
  const nb = model.b.length;
  const d = na + nb;
  if (parameterCovariance.length !== d || parameterCovariance.some((r) => r.length !== d)) {
    throw new ControlArgumentError(`parameter covariance must be ${d} x ${d} (na + nb)`);
  }
  const D = controller.den;
  const N = controller.num;
  const L = Math.max(na + D.length, model.nk + nb - 1 + N.length);
  const coeffs = new Array<number>(L).fill(0);
  const A = [1, ...model.a];
  A.forEach((ai, i) => D.forEach((dj, j) => (coeffs[i + j]! += ai * dj)));
  model.b.forEach((bi, i) => N.forEach((nj, j) => (coeffs[model.nk + i + j]! += bi * nj)));
  const J: number[][] = Array.from({ length: L }, () => new Array<number>(d).fill(0));
  for (let i = 0; i < na; i++) D.forEach((dj, j) => (J[i + 1 + j]![i] = dj));
  for (let i = 0; i < nb; i++) N.forEach((nj, j) => (J[model.nk + i + j]![na + i] = nj));
  const covariance: number[][] = [];
  for (let r = 0; r < L; r++) {
    const row: number[] = [];
    for (let s = 0; s < L; s++) {
      let v = 0;
      for (let a = 0; a < d; a++) {
        const jra = J[r]![a]!;
        if (jra === 0) continue;
        for (let b = 0; b < d; b++) v += jra * parameterCovariance[a]![b]! * J[s]![b]!;
      }
      row.push(v);
    }
    covariance.push(row);
  }
  return { coeffs, covariance, jacobian: J };
}
