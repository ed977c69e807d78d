/**
 * How sure a tuning finding read from routine data can be. Three rules, all about not stating a
 * guess as a finding that opens a work-list item (confidence above 0.6, lib/domain/findings.ts):
 *
 * 1. Sluggish tuning: a finding is a work item only when the loop's slowness is measured against
 *    the configured dead time by both estimators and both agree, or when the loop's own set-point
 *    response is slow (below, SET_POINT): the Harris index (the
 *    minimum-variance benchmark; Harris 1989) and the disturbance time (the slowest pole of the
 *    error's AR model against SIMC's τc of one to a few dead times; Skogestad 2003, from memory).
 *    They fail in different ways: the Harris index is out of a PI controller's reach on processes
 *    with lags (Jelali's survey, Control Eng. Practice 14, 2006, from memory), the disturbance
 *    time carries the load's own colour. Either alone, the missing swing-back alone (what SIMC's
 *    load response on a lag- or dead-time-dominant process looks like) or Hägglund's idle index
 *    alone are one sign: the finding is stated at 0.5 ("possible"), with a line saying what
 *    would decide. Without a configured dead time neither estimator exists and sluggishness is
 *    not identifiable from routine closed-loop data (the process is not; Ljung, System
 *    Identification, 1999, sec. 13.4, from memory), so no sluggish finding is a work item.
 *    The levels follow the share of such findings that were right on study sets of the labelled
 *    benchmark (a stated confidence should match how often it is right: calibration, common
 *    practice): one sign 40–45 % right, both estimators 80 %, both with no swing-back 92 %
 *    (docs/assessment-rounds.md, "Healthy loops read as faults").
 *    The loop's own set-point response (setpoint-response.ts) is a different kind of evidence: a
 *    set-point move is an outside signal, so the closed loop's response to it is identifiable from
 *    the record (Ljung 1999, sec. 13.4, from memory) and is judged against the apparent dead time
 *    read from that same response (Swanda & Seborg 1999, from memory). A slow set-point response
 *    alone opens a work item (SET_POINT); with further signs it rises as the two estimators do.
 * 2. Compressed exports: dead-band or swinging-door compression replays the error as straight
 *    lines between stored points, which lengthens its autocorrelation and fills its dips
 *    (Thornhill, Choudhury & Shah, J. Process Control 14, 2004, from memory; the Harris index is
 *    withheld there already). A tuning finding read from the error's correlation (no sustained
 *    oscillation, no output driven stop to stop) is then capped at 0.5 with a caution.
 * 3. A weak regular cycle under a healthy verdict: the error's ACF zero crossings are regular
 *    (Thornhill, Huang & Zhang's r > 1, J. Process Control 13, 2003) but the cycle is too weak or
 *    too damped for an oscillation finding, and the periodogram's strongest peak lies at the same
 *    period (within 20 %) at WEAK_LINE times its neighbours' median or more (for a smooth
 *    spectrum an ordinate exceeds r times the local median with probability 2^−r, Fisher 1929,
 *    from memory: about 3 % at 5 for one frequency named in advance, here by the ACF). Two
 *    independent methods agreeing on one period is a cycle in the data, from outside or from the
 *    loop's own mode, that cannot be told from a quiet loop with confidence: the healthy verdict
 *    is kept at 0.5 with a line naming the cycle (on study sets about half such verdicts were
 *    right; the others were weak outside sinusoids, sticking valves and one aggressive loop).
 * 4. A healthy verdict says that no fault sign was found. It is stated at HEALTHY, one step more
 *    (FURTHER_SIGN) only when a figure weighs the loop's speed against the process and finds it
 *    fast enough (Harris index below 3, the disturbance time under 5 dead times, the set point's
 *    moves followed within a few apparent dead times). Hägglund's idle index no longer adds: it
 *    reads slowness only in the recovery after a load step (Hägglund 1999), and under continuously
 *    varying loads it stays negative whatever the tuning (its increments follow the load's pace,
 *    not the controller's; docs/assessment.md), so a value short of +1 does not show a loop well
 *    tuned. On a compressed export the missing ringing a healthy verdict rests on is itself
 *    doubtful (compression fills the error's dips, rule 2), so a healthy verdict is capped at
 *    ONE_SIGN there too. On study sets healthy verdicts stated at 0.7–0.8 were right 52–55 % of the
 *    time, whatever the evidence beside them (docs/assessment-rounds.md, "Healthy verdicts").
 */
import { fmt } from "./oscillation";
import type { SpectralLine } from "./spectral-line";
import type { Diagnosis } from "./types";

export interface SluggishSigns {
  /** Harris index above its limit (needs a configured dead time). */
  harris: boolean;
  /** Disturbance time above its limit in dead times (needs a configured dead time). */
  slow: boolean;
  noSwing: boolean;
  idle: boolean;
  /** The loop's response to its own set-point moves is slow against its apparent dead time (setpoint-response.ts). */
  setPoint?: boolean;
  /** The Harris index or the disturbance time could be computed (a dead time is configured and the data allow it). */
  hasEstimators: boolean;
}

/** Confidence of a finding from one sign only: stated, but below a work item (0.6). */
export const ONE_SIGN = 0.5;
/** The Harris index and the disturbance time agree. */
const BOTH_ESTIMATORS = 0.75;
/** Each further sign beside the two estimators (and a speed figure beside a healthy verdict, rule 4). */
export const FURTHER_SIGN = 0.1;
/** A healthy verdict: no fault sign found (rule 4). */
export const HEALTHY = 0.6;
/**
 * A slow set-point response alone: a work item (ours; on the study sets no healthy loop's response
 * reached the limits of setpoint-response.ts, docs/assessment-rounds.md "Sluggishness from the set point's own moves").
 */
const SET_POINT = 0.65;
/** One estimator with a further sign, or the two signs that need no dead time together. */
const WEAK_PAIR = 0.55;

export function sluggishConfidence(s: SluggishSigns): { confidence: number; notes: string[] } {
  const further = (s.noSwing ? 1 : 0) + (s.idle ? 1 : 0);
  if (s.harris && s.slow) return { confidence: Math.min(0.95, BOTH_ESTIMATORS + FURTHER_SIGN * (further + (s.setPoint ? 1 : 0))), notes: [] };
  if (s.setPoint) return { confidence: Math.min(0.95, SET_POINT + FURTHER_SIGN * (further + (s.harris || s.slow ? 1 : 0))), notes: [] };
  const signs = (s.harris || s.slow ? 1 : 0) + further;
  const confidence = signs >= 2 ? WEAK_PAIR : ONE_SIGN;
  const notes = [
    s.hasEstimators
      ? `a possible finding, not a certain one: ${s.harris ? "the Harris index is high but the disturbance time is not" : s.slow ? "the disturbance time is long but the Harris index is not high" : "neither the Harris index nor the disturbance time points to slowness"}; a loop on a process with lags, or under a slow load, shows the same (a step test of the closed loop would decide)`
      : "a possible finding, not a certain one: without the Harris index and the disturbance time (both need a configured dead time), slowness cannot be weighed against what the process allows (a well-tuned loop on a lag- or dead-time-dominant process recovers without swinging back too); enter the dead time from a step test",
  ];
  return { confidence, notes };
}

/** Labels of tuning findings read from the error's correlation. */
const TUNING = new Set(["aggressive-tuning", "sluggish-tuning"]);

/**
 * Caps a tuning finding read from a compressed export's error correlation (rule 2 above), and a healthy verdict (rule 4). A
 * sustained oscillation, or an output driven from limit to limit (saturation above a fifth of the
 * time), is read from the cycle itself and is left as it is.
 */
export function temperForCompression(d: Diagnosis, x: { compressed: boolean; oscillationDetected: boolean; saturation: number }): Diagnosis {
  if (!x.compressed || x.oscillationDetected || x.saturation > 0.2 || d.confidence <= ONE_SIGN) return d;
  if (d.label === "healthy") {
    return {
      ...d,
      confidence: ONE_SIGN,
      evidence: [...d.evidence, "stated with less confidence: the export looks compressed, and compression fills the error's dips and lengthens its autocorrelation (Thornhill, Choudhury & Shah 2004), so an error that does not ring is weaker evidence of good tuning; an uncompressed export would decide"],
    };
  }
  if (!TUNING.has(d.label)) return d;
  return {
    ...d,
    confidence: ONE_SIGN,
    evidence: [...d.evidence, "a possible finding, not a certain one: the export looks compressed, and compression replays the error as straight lines between stored points, which lengthens its autocorrelation and fills its dips (Thornhill, Choudhury & Shah 2004); an uncompressed export would decide"],
  };
}

/** Peak over its neighbours' median at which a peak at the ACF's period counts (about 3 % by chance; ours, see above). */
export const WEAK_LINE = 5;

/** Rule 3 above: a healthy verdict beside a weak regular cycle is stated at ONE_SIGN with the cycle named. */
export function temperForWeakCycle(d: Diagnosis, x: { regularity: number | null; periodS: number | null; spectralLine: SpectralLine | null }): Diagnosis {
  const l = x.spectralLine;
  if (d.label !== "healthy" || l === null || x.periodS === null || x.regularity === null || !(x.regularity > 1)) return d;
  if (Math.abs(l.periodS / x.periodS - 1) > 0.2 || l.ratio < WEAK_LINE) return d;
  return {
    ...d,
    confidence: Math.min(d.confidence, ONE_SIGN),
    evidence: [
      ...d.evidence,
      `a weak regular cycle of about ${fmt(x.periodS, 0)} s is in the error (autocorrelation zero crossings regular, r = ${fmt(x.regularity)}, Thornhill et al. 2003; a spectral peak ${fmt(l.ratio, 0)}× its neighbours at ${fmt(l.periodS, 0)} s), below the limits of an oscillation finding: if it persists, look for a source with that period (a neighbouring loop, a machine) or a valve that sticks`,
    ],
  };
}
