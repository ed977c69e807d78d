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
 * first); periodic set-point changes are lines (constant-set-point data are used where possible).
 */
import { realForward } from "./fft";

export interface SpectralLine {
  /** Period of the strongest line, s. */
  periodS: number;
  /** Its periodogram ordinate over the median of its neighbours. */
  ratio: number;
  /** Share of the error's variance in the line (its bins above the local level). */
  share: number;
}

/** Line limits (ours, see above). */
export const LINE_RATIO = 40;
export const LINE_SHARE = 0.05;
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
    best = { periodS: (N / f) * T, ratio, share: s / total };
  }
  return best;
}

/** A line strong and clear enough to count as a periodic disturbance. */
export function isLine(l: SpectralLine | null): boolean {
  return l !== null && l.ratio >= LINE_RATIO && l.share >= LINE_SHARE;
}
