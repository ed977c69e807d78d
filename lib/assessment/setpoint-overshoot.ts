/**
 * Overshoot of the loop's response to its own set-point moves (setpoint-response.ts) as a sign of
 * aggressive tuning. The step response r -> y fitted from the set point's increments peaks above
 * 1 (the completed move) by the overshoot; large overshoot is the classic sign of an
 * under-damped, aggressive closed loop (common practice; Seborg, Edgar & Mellichamp, Process
 * Dynamics and Control, on overshoot and decay ratio, from memory; Swanda & Seborg 1999 judge a
 * PI loop's set-point response by it too, from memory).
 *
 * Limit: an overshoot of half the move, OVERSHOOT_LIMIT = 0.5. For the standard under-damped
 * second-order response the decay ratio is the overshoot squared, so 0.5 is quarter-amplitude
 * damping (decay ratio 1/4; Ziegler & Nichols 1942, common practice), the same line the error's
 * own swing is judged against in diagnosis.ts. With integral action some overshoot is
 * unavoidable where the PI loop's zero is slow against the closed loop (an integrating process,
 * or a lag-dominant one tuned with Ti < τ): SIMC at its tightest (τc = θ; Skogestad, J. Process
 * Control 13, 2003, from memory) overshoots a set-point step by 28 % on an integrating process and
 * by up to 27 % on a lag-dominant first-order one, 4–10 % elsewhere; aggressive settings (gain
 * margin 1.25–1.7, Ti 0.3–0.7 of SIMC's) overshoot by 52–120 % (scipy.signal step responses,
 * tests/reference/generate_setpoint_overshoot.py). The product does not know τ/θ, so one limit
 * lies above what a good tuning gives on every plant type.
 *
 * Significance: the overshoot must exceed SIMC's largest (GOOD_OVERSHOOT) by Z_ONSET standard
 * errors of the step response at its peak, so a noisy response that merely might overshoot makes
 * no finding.
 *
 * Confidence: one sign alone is a possible finding (ALONE, below a work item at 0.6); a weak
 * ringing of the error or an error swing beyond quarter amplitude that fell short of its own
 * finding agree and raise it by AGREEING each; an aggressive finding from the error's own figures
 * gains AGREEING when the set-point response agrees (ours).
 */
import { fmt } from "./oscillation";
import type { AcfDecay } from "./acf-decay";
import type { Diagnosis } from "./types";

/** Overshoot at which the set-point response reads as aggressive (quarter-amplitude damping; see above). */
export const OVERSHOOT_LIMIT = 0.5;
/** The largest overshoot of a SIMC loop at τc = θ (integrating process, scipy; see above). */
export const GOOD_OVERSHOOT = 0.3;
/** Confidence of the overshoot sign alone, and the step per agreeing sign (ours). */
const ALONE = 0.5;
const AGREEING = 0.1;

/** The evidence line of an aggressive set-point overshoot, or null when the response does not show one. */
export function overshootLine(r: { overshoot: number | null; overshootSe: number | null; t63S: number | null }, zOnset: number): string | null {
  if (r.overshoot === null || r.overshootSe === null || r.t63S === null) return null;
  if (r.overshoot < OVERSHOOT_LIMIT || r.overshoot - zOnset * r.overshootSe <= GOOD_OVERSHOOT) return null;
  return `the set point's moves overshoot by about ${fmt(100 * r.overshoot, 0)} % of the move (± ${fmt(100 * r.overshootSe, 0)} %; step response from the set-point moves in the data): more than half the move, less damped than quarter amplitude, beyond the 28 % a tight SIMC tuning gives a level loop (Skogestad 2003)`;
}

export interface OvershootContext {
  /** The overshoot sign's evidence line (setPointSigns), null or absent without it. */
  overshoot?: string | null;
  /** The set-point response is slow (a sluggish sign): the two contradict, nothing is changed. */
  slow?: boolean;
  ringDepth: number | null;
  acfDecay: AcfDecay | null | undefined;
}

/** Ring depth that counts as a weak ringing of the error (the limit of diagnosis.ts's ring checks). */
const WEAK_RING = -0.15;
/** Increments' swing ratio at quarter amplitude (acf-decay.ts, Miao & Seborg 1999). */
const QUARTER_SWING = 0.5;

/**
 * Adds the set-point overshoot to a diagnosis: a healthy or sluggish verdict becomes a possible
 * aggressive finding (stronger with agreeing signs); an aggressive one gains the line.
 */
export function withSetPointOvershoot(d: Diagnosis, x: OvershootContext): Diagnosis {
  const line = x.overshoot ?? null;
  if (line === null || x.slow) return d;
  return withAggressiveSign(d, line, x, { alone: ALONE, loneNote: "a possible finding, not a certain one: one sign only; a closed-loop set-point step test would decide" });
}

/**
 * One sign of aggressive tuning read outside the error's own figures (the set-point overshoot, the
 * phase-margin ceiling of level-phase-ceiling.ts) added to a diagnosis: an aggressive verdict gains
 * AGREEING and the line; a healthy or sluggish one becomes aggressive at `alone`, plus AGREEING per
 * agreeing ringing sign (with `loneNote` when there is none); any other verdict stands.
 */
export function withAggressiveSign(
  d: Diagnosis,
  line: string,
  x: { ringDepth: number | null; acfDecay: AcfDecay | null | undefined },
  o: { alone: number; loneNote: string },
): Diagnosis {
  if (d.label === "aggressive-tuning") return { ...d, confidence: Math.min(0.95, d.confidence + AGREEING), evidence: [...d.evidence, line] };
  if (d.label !== "healthy" && d.label !== "sluggish-tuning") return d;
  const agree = agreeingSigns(x);
  const ev = [`likely aggressive tuning: ${line}`, ...agree];
  if (agree.length === 0) ev.push(o.loneNote);
  return { label: "aggressive-tuning", confidence: o.alone + AGREEING * agree.length, evidence: ev };
}

/**
 * The error's own ringing signs that fell short of a finding but agree with an aggressive sign
 * read elsewhere (a weak ring, an increments' swing beyond quarter amplitude): one line each.
 */
export function agreeingSigns(x: { ringDepth: number | null; acfDecay: AcfDecay | null | undefined }): string[] {
  const out: string[] = [];
  if (x.ringDepth !== null && x.ringDepth < WEAK_RING) out.push(`the error rings a little after disturbances too (its autocorrelation dips to ${fmt(x.ringDepth)}), short of a finding of its own`);
  if (x.acfDecay && x.acfDecay.ratio >= QUARTER_SWING) out.push(`the error's increments swing back beyond quarter amplitude too (R = ${fmt(x.acfDecay.ratio)} ± ${fmt(x.acfDecay.ratioSd)}, 0.5 at quarter amplitude; Miao & Seborg 1999), short of a finding of its own`);
  return out;
}
