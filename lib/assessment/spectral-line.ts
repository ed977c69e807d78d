/**
 * A deterministic periodic component (a spectral line) in the control error. A stable loop under
 * random disturbances has a continuous spectrum: its own lightly damped mode shows as a broad
 * hump whose width is set by its damping, and an irregular stick-slip cycle under random loads is
 * broadened too. A periodic disturbance entering from outside (a neighbouring loop's cycle, a
 * rotating machine, a batch step) keeps its period and shows as a line, one frequency bin wide,
 * however large the random part.
 *
 * Test: the periodogram of the whole (Hann-windowed) record against the median of its
 * neighbours. For a smooth spectrum each ordinate over the local level is exponentially
 * distributed (Fisher, "Tests of significance in harmonic analysis", Proc. R. Soc. A 125, 1929;
 * the local-median form, which allows a coloured background, is ours, in the spirit of Thomson's
 * harmonic F-test, Proc. IEEE 70, 1982 — both from memory), so an ordinate over
 * its neighbours' median exceeds r with probability 2^−r. The window spreads a line over three
 * bins, whose mean is taken as its ordinate. A line needs r >= 40: about twice the largest value
 * seen by chance in lightly damped AR(2) noise (100 seeds of 20,000 samples, ζ 0.1–0.3; the
 * margin covers leakage and steep spectral slopes), and its power must be at least 5 % of the
 * error's variance to matter.
 *
 * Failure modes: a loop close to instability has a mode so lightly damped that its hump narrows
 * towards a line (the ratio of such loops stayed below 30 in the benchmark's DEV recordings); a regular limit
 * cycle of a sticking valve without loads is a line too (the stiction tests are therefore asked
 * first); periodic set-point changes are lines.
 *
 * Set-point moves: the error's answer to a set-point step (it jumps by the move, then decays as
 * the loop follows) is a transient of the loop's own making, not a disturbance, and its spectrum
 * is broad and large at the low frequencies where slow outside cycles sit: a few operator moves
 * can raise the local level tenfold and hide a line that the rest of the record shows clearly.
 * `settledMask` leaves out each move's response until the loop has settled (below); the set
 * point is an outside signal the data record, so this removes the loop's known input, not a guess.
 */
import { realForward } from "./fft";

export interface SpectralLine {
  /** Period of the strongest line, s. */
  periodS: number;
  /** Its periodogram ordinate over the median of its neighbours. */
  ratio: number;
  /** Share of the error's variance in the line (its bins above the local level). */
  share: number;
  /** Its ordinate over the mean of the bins just outside its leakage (LINE_NEAR). */
  near: number;
}

/** Line limits (ours, see above). */
export const LINE_RATIO = 40;
export const LINE_SHARE = 0.05;
/**
 * A line is as narrow as the window: its ordinate must also stand this far above the mean of its
 * immediate neighbours, the bins just outside its leakage (LEAK + 1 to 3·LEAK on each side). A
 * line at the limit above stands about 0.69 × 40 ≈ 28 times above them when they hold only the
 * background (the median of exponential ordinates is ln 2 of their mean); their mean reaches
 * 2.8 times its expectation by chance about 4 times in 1,000 (numpy, white noise through the
 * Hann window, about 650,000 bins; docs/assessment.md). A lightly damped mode's hump is wider than the window's main lobe
 * whatever the record's length (its half-power width is 2ζ f0, a line's 1/length), so its
 * immediate neighbours rise with its peak: on study bases 101–110 all peaks of 40× or more on
 * loops without an outside cycle but one (a loop on the verge of instability) stood 1.9–8.4 times
 * above them, the outside cycles 10.9 and more. 10 is ours.
 */
export const LINE_NEAR = 10;
/** Neighbours on each side for the local level, and bins of leakage on each side of a line. */
const WIDE = 40;
const LEAK = 3;

/**
 * The strongest line of x (mean-removed over included samples; others count as zero) among the
 * peaks that could carry LINE_SHARE of its variance, between periods of four samples and an
 * eighth of the record; null when the record is too short or no peak is that strong.
 */
export function strongestLine(x: Float64Array, include: Uint8Array, T: number): SpectralLine | null {
  const n = x.length;
  if (n < 512) return null;
  let N = 1;
  while (N < n) N *= 2;
  let m = 0;
  let c = 0;
  for (let i = 0; i < n; i++) if (include[i]) {
    m += x[i]!;
    c++;
  }
  if (c < 256) return null;
  m /= c;
  // The windowed record, zero-padded to N and packed for the transform of a real sequence:
  // sample 2j in zr[j], 2j + 1 in zi[j].
  const H = N / 2;
  const zr = new Float64Array(H);
  const zi = new Float64Array(H);
  for (let i = 0; i < n; i++) (i % 2 ? zi : zr)[i >> 1] = include[i] ? (x[i]! - m) * (0.5 - 0.5 * Math.cos((2 * Math.PI * i) / (n - 1))) : 0;
  const re = new Float64Array(H + 1);
  const im = new Float64Array(H + 1);
  realForward(zr, zi, re, im);
  const P = new Float64Array(H);
  let total = 0;
  for (let f = 1; f < H; f++) {
    P[f] = re[f]! * re[f]! + im[f]! * im[f]!;
    total += P[f]!;
  }
  if (!(total > 0)) return null;
  const lo = Math.max(LEAK + 1, Math.ceil((8 * N) / n));
  const hi = Math.min(Math.floor(N / 4), H - WIDE - 1);
  let best: SpectralLine | null = null;
  const nb: number[] = [];
  // only peaks that could carry LINE_SHARE of the variance over their 2·LEAK + 1 bins (a few
  // hundred at most, so the local medians cost little)
  const floorP = (LINE_SHARE * total) / (2 * LEAK + 1);
  for (let f = lo; f < hi; f++) {
    if (!(P[f]! >= floorP && P[f]! >= P[f - 1]! && P[f]! >= P[f + 1]!)) continue;
    nb.length = 0;
    for (let k = Math.max(1, f - WIDE); k <= f + WIDE; k++) if (Math.abs(k - f) > LEAK) nb.push(P[k]!);
    nb.sort((a, b) => a - b);
    const med = nb[Math.floor(nb.length / 2)]!;
    if (!(med > 0)) continue;
    // the window spreads a line over about three bins (and a line between bins loses up to a
    // third of its peak ordinate to scalloping): their mean is the line's ordinate
    const ratio = (P[f - 1]! + P[f]! + P[f + 1]!) / (3 * med);
    if (best && ratio <= best.ratio) continue;
    // local level of a smooth spectrum = median / ln 2
    let s = 0;
    for (let k = f - LEAK; k <= f + LEAK; k++) s += Math.max(0, P[k]! - med / Math.LN2);
    let nearSum = 0;
    for (let k = LEAK + 1; k <= 3 * LEAK; k++) nearSum += P[Math.max(1, f - k)]! + P[f + k]!;
    best = { periodS: (N / f) * T, ratio, share: s / total, near: (P[f - 1]! + P[f]! + P[f + 1]!) / 3 / (nearSum / (4 * LEAK)) };
  }
  return best;
}

/** Settling, in multiples of the time to half the move (ours, see `settledMask`). */
const SETTLE_HALVES = 4;

/**
 * `include` without each set-point move's response: from the move until the error has come back
 * to half the move and three times as long again (4·t50; a first-order-plus-dead-time loop is at
 * half after θ + 0.69 τc and within 2 % after θ + 3.9 τc, common practice; against scipy's error
 * traces what is left in is at most 0.4 % of the move for SIMC tuning, 13 % for an underdamped
 * and 9 % for a sluggish loop: tests/reference/generate_settling.py; factor ours), at most up to
 * the next move. The set point in engineering units, `e` in % of `span`. When that would leave
 * out more than half the closed-loop record (a set point that moves all the time, as a cascade
 * slave's), the moves are the loop's usual disturbance and `include` is returned unchanged.
 */
export function settledMask(e: Float64Array, sp: Float64Array, include: Uint8Array, span: number): Uint8Array {
  const n = e.length;
  const tol = 1e-4 * span;
  const out = Uint8Array.from(include);
  let kept = 0;
  let total = 0;
  for (let i = 0; i < n; i++) total += include[i]!;
  let moved = false;
  for (let i = 1; i < n; i++) {
    if (Math.abs(sp[i]! - sp[i - 1]!) <= tol) continue;
    moved = true;
    const a = (100 * (sp[i]! - sp[i - 1]!)) / span;
    let next = i + 1;
    while (next < n && Math.abs(sp[next]! - sp[next - 1]!) <= tol) next++;
    let j = i;
    while (j < next && Math.sign(a) * e[j]! > Math.abs(a) / 2) j++;
    const end = Math.min(next, i + SETTLE_HALVES * (j - i + 1));
    out.fill(0, i, end);
  }
  if (!moved) return include;
  for (let i = 0; i < n; i++) kept += out[i]!;
  return kept >= total / 2 ? out : include;
}

/** A line strong and clear enough to count as a periodic disturbance. */
export function isLine(l: SpectralLine | null): boolean {
  return l !== null && l.ratio >= LINE_RATIO && l.share >= LINE_SHARE && l.near >= LINE_NEAR;
}
