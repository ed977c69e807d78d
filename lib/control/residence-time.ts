/**
 * Average residence time of a closed-loop set-point response (pure; no I/O). Used by the loop
 * assessment's cross-check with the tracked model (lib/assessment/model-check.ts): a response much
 * slower than the loop's commissioned baseline is a sluggish-tuning finding on the work list.
 */

/**
 * Average residence time of the closed-loop set-point response with unit static gain:
 * Tar = T Σ_k (1 - y_k) = -T G'(1)/G(1) = T [Σ_i 1/(1 - p_i) - Σ_j 1/(1 - z_j)] for
 * G(z) = K Π(z - z_j) / Π(z - p_i) (derived here from the step response; the continuous
 * counterpart Tar = Σ τ_poles - Σ τ_zeros + dead time is used by Åström & Hägglund, *PID
 * Controllers: Theory, Design, and Tuning*, 2nd ed., 1995 — from memory). A slow pole that a zero
 * nearly cancels (a PI controller's zero) adds almost nothing, as in the response itself.
 * With `sigmas` > 0 each pole is first moved k·sd of its radius toward the origin. Null when a
 * pole is on or outside the circle (then stability, not speed, is the question) or the result is
 * not finite.
 */
export function averageResidenceTime(
  poles: readonly { re: number; im: number; sdRadius?: number | null }[],
  zeros: readonly { re: number; im: number }[],
  T: number,
  sigmas = 0,
): number | null {
  let sum = 0;
  const inv = (re: number, im: number) => {
    // Re 1/(1 - z) for z = re + j im
    const a = 1 - re;
    const d = a * a + im * im;
    return d === 0 ? Infinity : a / d;
  };
  for (const p of poles) {
    const r = Math.hypot(p.re, p.im);
    if (r >= 1) return null;
    const shrink = r > 0 ? Math.max(0, r - sigmas * (p.sdRadius ?? 0)) / r : 1;
    sum += inv(p.re * shrink, p.im * shrink);
  }
  for (const z of zeros) sum -= inv(z.re, z.im);
  const tar = T * sum;
  return Number.isFinite(tar) ? Math.max(0, tar) : null;
}
