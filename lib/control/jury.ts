/**
 * Jury's stability test for a real polynomial P(z) = a0 z^n + a1 z^(n-1) + ... + an (descending
 * powers): all roots strictly inside the unit circle without computing them.
 *
 * Method: the tabular form of E. I. Jury, *Theory and Application of the z-Transform Method*, 1964,
 * in the normalised recursion of K. J. Åström & B. Wittenmark, *Computer-Controlled Systems*,
 * 3rd ed., 1997, sec. 3.2:
 *   row pair k:  a_0^(k) ... a_k^(k)   and the same row reversed,
 *   alpha_k = a_k^(k) / a_0^(k),   a_i^(k-1) = a_i^(k) - alpha_k a_(k-i)^(k),  i = 0..k-1,
 * starting from a^(n) = a (with a0 > 0). All roots lie strictly inside the unit circle iff
 * a_0^(k) > 0 for k = n-1, ..., 0 (equivalently |alpha_k| < 1 for every k: the Schur–Cohn
 * reflection coefficients). A root on the circle gives |alpha_k| = 1 at some stage, so it is
 * reported as not stable; the table stops at the first a_0^(k) <= 0 (the next alpha is undefined
 * or meaningless once the verdict is known).
 *
 * The three necessary conditions P(1) > 0, (-1)^n P(-1) > 0 and |a_n| < a_0 are reported by name
 * as well (for degree 2 they are also sufficient). A polynomial with a0 < 0 is multiplied by -1
 * first (same roots). Values within rounding of the boundary (a root within ~1e-12 of the circle)
 * are numerically undecidable; the verdict there follows the computed signs.
 */
import { ControlArgumentError } from "./errors";
import { leadingNonZero } from "./poly";

export interface JuryCondition {
  /** The condition in words, e.g. "P(1) > 0" or "a_0^(2) > 0". */
  name: string;
  /** The left-hand side's value (the condition compares it with 0, or |a_n| with a_0). */
  value: number;
  ok: boolean;
}

export interface JuryResult {
  /** True iff every root lies strictly inside the unit circle. */
  stable: boolean;
  /** The three necessary conditions, then one condition per table row pair (a_0^(k) > 0). */
  conditions: JuryCondition[];
  /** Table rows: for k = n down to 1 the row a^(k) and its reverse, then the final row a^(0). */
  table: number[][];
}

function normalise(coeffs: ArrayLike<number>): number[] {
  const first = leadingNonZero(coeffs, coeffs.length, "juryTest: the zero polynomial has no stability verdict");
  const a = Array.from(coeffs).slice(first);
  if (a.length < 2) throw new ControlArgumentError("juryTest: degree must be at least 1 (a constant has no roots)");
  if (a[0]! < 0) for (let i = 0; i < a.length; i++) a[i] = -a[i]!;
  return a;
}

/**
 * Jury's tabular stability test (see the module doc for the method and sources).
 * @param coeffs descending powers of z, degree >= 1 after stripping leading zeros.
 * @throws NonFiniteInputError on NaN/infinite input; ControlArgumentError for degree 0 or the
 *   zero polynomial.
 */
export function juryTest(coeffs: ArrayLike<number>): JuryResult {
  const a = normalise(coeffs);
  const n = a.length - 1;
  let p1 = 0;
  let pm1 = 0;
  for (let i = 0; i <= n; i++) {
    p1 += a[i]!;
    // (-1)^n P(-1) = sum a_i (-1)^i
    pm1 += i % 2 === 0 ? a[i]! : -a[i]!;
  }
  const conditions: JuryCondition[] = [
    { name: "P(1) > 0", value: p1, ok: p1 > 0 },
    { name: "(-1)^n P(-1) > 0", value: pm1, ok: pm1 > 0 },
    { name: "|a_n| < a_0", value: Math.abs(a[n]!) - a[0]!, ok: Math.abs(a[n]!) < a[0]! },
  ];
  const table: number[][] = [];
  let row = a.slice();
  let rowsOk = true;
  for (let k = n; k >= 1; k--) {
    table.push(row.slice(), row.slice().reverse());
    const alpha = row[k]! / row[0]!;
    const next = new Array<number>(k);
    for (let i = 0; i < k; i++) next[i] = row[i]! - alpha * row[k - i]!;
    const lead = next[0]!;
    const ok = lead > 0;
    conditions.push({ name: `a_0^(${k - 1}) > 0`, value: lead, ok });
    row = next;
    if (!ok) {
      rowsOk = false;
      break;
    }
  }
  if (rowsOk) table.push(row.slice());
  const stable = conditions.every((c) => c.ok);
  return { stable, conditions, table };
}

let scratch = new Float64Array(16);

/**
 * The same verdict as `juryTest(coeffs).stable` without building the table or allocating
 * (hot path). `length` defaults to `coeffs.length` (lets a caller pass a longer reusable buffer).
 * @throws as `juryTest`.
 */
export function juryStable(coeffs: ArrayLike<number>, length: number = coeffs.length): boolean {
  if (length === 4) {
    // the tracker's common case (second-order plant under a PI): a proper cubic, finite
    const c0 = coeffs[0]!;
    const c1 = coeffs[1]!;
    const c2 = coeffs[2]!;
    const c3 = coeffs[3]!;
    if (c0 !== 0 && Number.isFinite(c0 + c1 + c2 + c3)) return cubicStable(c0, c1, c2, c3);
  }
  const first = leadingNonZero(coeffs, length, "juryStable: the zero polynomial has no stability verdict");
  const n = length - 1 - first;
  if (n < 1) throw new ControlArgumentError("juryStable: degree must be at least 1 (a constant has no roots)");
  if (n === 3) return cubicStable(coeffs[first]!, coeffs[first + 1]!, coeffs[first + 2]!, coeffs[first + 3]!);
  if (scratch.length < n + 1) scratch = new Float64Array(2 * (n + 1));
  const sign = coeffs[first]! < 0 ? -1 : 1;
  let p1 = 0;
  let pm1 = 0;
  for (let i = 0; i <= n; i++) {
    const c = sign * coeffs[first + i]!;
    scratch[i] = c;
    p1 += c;
    pm1 += i % 2 === 0 ? c : -c;
  }
  if (!(p1 > 0 && pm1 > 0 && Math.abs(scratch[n]!) < scratch[0]!)) return false;
  for (let k = n; k >= 1; k--) {
    const alpha = scratch[k]! / scratch[0]!;
    // In place: a_i <- a_i - alpha a_(k-i), pairing i and k-i so both use old values.
    for (let i = 0, j = k; i <= j; i++, j--) {
      const ai = scratch[i]!;
      const aj = scratch[j]!;
      scratch[i] = ai - alpha * aj;
      if (i !== j) scratch[j] = aj - alpha * ai;
    }
    if (!(scratch[0]! > 0)) return false;
  }
  return true;
}

/**
 * Jury's conditions written out for a cubic c0 z^3 + c1 z^2 + c2 z + c3 (the tracker's common
 * case: a second-order plant under a PI), with c0 > 0 after a sign change: P(1) > 0,
 * (-1)^3 P(-1) > 0, |c3| < c0, and the one condition of the second table row,
 * |c3^2 - c0^2| > |c3 c1 - c0 c2| (Jury 1964; Ogata, *Discrete-Time Control Systems*, 2nd ed.,
 * 1995, sec. 4-3, the third-order case). Strict inequalities: a root on the circle is not stable.
 */
function cubicStable(c0: number, c1: number, c2: number, c3: number): boolean {
  if (c0 < 0) {
    c0 = -c0;
    c1 = -c1;
    c2 = -c2;
    c3 = -c3;
  }
  if (!(c0 + c1 + c2 + c3 > 0)) return false; // P(1) > 0
  if (!(c0 - c1 + c2 - c3 > 0)) return false; // -P(-1) > 0
  if (!(Math.abs(c3) < c0)) return false;
  return Math.abs(c3 * c3 - c0 * c0) > Math.abs(c3 * c1 - c0 * c2);
}
