/**
 * An error that never swings back within the record: the strongest form of the "no swing-back"
 * sign of sluggish tuning (diagnosis.ts), which before this module was read only where the error's
 * autocorrelation showed a dominant period, and so was silent exactly where the loop was slowest.
 *
 * Why it is a sign. With integral action the sensitivity function vanishes at zero frequency
 * (S(0) = 0, the internal model principle; common practice), so under loads that do not drift
 * without bound the error's spectrum vanishes at zero frequency and the sum of its autocorrelation
 * over all lags is zero: the ACF must swing below zero within a few closed-loop time scales. A
 * well-tuned loop's error therefore crosses the set point, and its ACF crosses zero, many times
 * over a long record. When the ACF crosses zero fewer than three times within the 60 % of the
 * lags examined (the lags of Thornhill, Huang & Zhang's period estimate, oscillation.ts, which needs
 * three crossings for one period), the error has not completed a single swing back and forth
 * within more than half the record: the closed loop takes a sizable share of the record to bring
 * its error back, an overdamped, slow recovery, which is what Hägglund (1999) calls sluggish.
 * Crossings spaced further apart than a sixth of the record (the period estimate's other limit)
 * are a period too long to measure, not a missing swing, and are not counted; nor is an ACF that
 * never goes below the hysteresis band at all (no crossing): the error then shows no recovery in
 * its ACF, only a quick decorrelation (a fast loop's error in a short window, seen in a live
 * window of 21 s) or a trend. Read only while the
 * set point holds (with set-point moves the loop's response to them is the better evidence,
 * setpoint-response.ts, and the error then carries the steps' own long tails), and not on
 * integrating (level) loops, where a level that wanders slowly within its band is often intended
 * (averaging level control, the tank absorbing flow changes; common practice; setpoint-response.ts
 * allows level loops a slower response for the same reason).
 *
 * What it cannot tell: a slow load the loop follows and a slow loop look alike in routine data
 * (the process is not identifiable from them; Ljung 1999, sec. 13.4), so it is one sign, as the
 * short swing-back is, and opens no work item alone (tuning-confidence.ts).
 */
export interface ErrorWander {
  /** Zero crossings of the error's ACF within the lags examined (with the oscillation test's hysteresis). */
  crossings: number;
  /** First lag at which the error's ACF reaches zero, s. */
  firstZeroS: number;
  /** That lag as a share of the record (at least MIN_FIRST_ZERO). */
  firstZeroShare: number;
}

export interface ErrorWanderInput {
  /** ACF of the closed-loop error (lag 0 first), as computed for the oscillation test. */
  acf: Float64Array;
  /** Grid period, s, and number of grid points. */
  T: number;
  n: number;
  /** The oscillation test found a dominant period (then the ordinary swing-back is read). */
  periodFound: boolean;
  /** ACF zero crossings the oscillation test counted. */
  crossings: number;
  /** The set point never moved in the record. */
  setPointHeld: boolean;
  /** An integrating (level) loop. */
  integrating: boolean;
}

/** Thornhill's period estimate needs this many ACF zero crossings (oscillation.ts). */
const ONE_SWING = 3;
/**
 * Earliest first zero of the ACF, as a share of the record, for a swing too slow to count: the ACF
 * of a cycle of period P crosses zero at P/4, 3P/4, 5P/4, so the third crossing lies beyond the
 * 60 % of the record examined when P > 0.48 of it, i.e. when the first lies beyond 0.6 / 5 = 0.12.
 * An ACF that reaches zero earlier and then stays within the band is an error that decorrelated
 * quickly (its long lags are noise), not one that is slow to come back.
 */
const MIN_FIRST_ZERO = 0.6 / 5;
/** Fewest samples for which the long-lag ACF means anything (ours; the oscillation test needs 20). */
const MIN_SAMPLES = 200;

export function errorWander(x: ErrorWanderInput): ErrorWander | null {
  if (x.periodFound || x.crossings < 1 || x.crossings >= ONE_SWING || !x.setPointHeld || x.integrating || x.n < MIN_SAMPLES || !(x.acf[0]! > 0)) return null;
  let first = -1;
  for (let k = 1; k < x.acf.length; k++) if (x.acf[k]! <= 0) {
    first = k;
    break;
  }
  if (first < 0 || first / x.n < MIN_FIRST_ZERO) return null;
  return {
    crossings: x.crossings,
    firstZeroS: first * x.T,
    firstZeroShare: first / x.n,
  };
}

/** The evidence line of the sign. */
export function errorWanderLine(w: ErrorWander, fmt: (v: number, digits?: number) => string): string {
  const first = `, first after ${fmt(w.firstZeroS, 0)} s, ${fmt(100 * w.firstZeroShare, 0)} % of the record`;
  return `the error never settles into swinging back past the set point: its autocorrelation crosses zero only ${w.crossings} ${w.crossings === 1 ? "time" : "times"} in the lags examined${first}, not one full swing (Thornhill et al. 2003 need three crossings for a period), so with the set point held and integral action the loop takes a sizable share of the record to remove a disturbance: an overdamped, slow recovery`;
}
