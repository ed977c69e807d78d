/**
 * The sensitivity peak identified from routine data (loop-margin.ts) as a sign of aggressive
 * tuning. Applied after the diagnosis, and only where it can change the verdict: a loop read healthy,
 * or sluggish on one sign only (a possible finding at 0.6 or less, tuning-confidence.ts), with a
 * configured dead time (the identification rests on it) and an uncompressed export (compression
 * replays PV as straight lines between stored points, which fakes the increments the fit reads;
 * Thornhill, Choudhury & Shah 2004, from memory).
 *
 * When the 95 % lower bound of Ms lies above 2 (Åström & Hägglund 2006, from memory: Ms 1.4–2 is the
 * design range, above 2 poor robustness) the verdict becomes `aggressive-tuning`, stated as a
 * possible finding (CONFIDENCE, below a work item): the figure rests on the configured
 * dead time and on a process model of low order, and a sluggish finding that two estimators agree on
 * (a work item) is left as it is, with the figure beside it.
 */
import type { LoopMargin } from "./loop-margin";
import { MS_LIMIT } from "./loop-margin";
import { fmt } from "./oscillation";
import type { Diagnosis } from "./types";

/** Confidence of the finding: stated, but below a work item (0.6; lib/domain/findings.ts). */
const CONFIDENCE = 0.55;

/** The diagnosis this sign may change: healthy, or a sluggish finding stated as possible only. */
export function marginMayDecide(d: Diagnosis): boolean {
  return d.label === "healthy" || (d.label === "sluggish-tuning" && d.confidence <= 0.6);
}

export function marginLine(m: LoopMargin): string {
  return `the process identified from PV and MV (prediction-error fit in closed loop, its delay fixed at the configured dead time; Ljung 1999) gives, with the configured controller, a sensitivity peak Ms of about ${fmt(m.ms, 1)} (95 % lower bound ${fmt(m.msLower, 1)}${m.gainMargin !== null ? `, gain margin ${fmt(m.gainMargin, 1)}` : ""}); above 2 is poor robustness (Åström & Hägglund 2006)`;
}

export function withLoopMargin(d: Diagnosis, m: LoopMargin | null): Diagnosis {
  if (m === null || !marginMayDecide(d) || !(m.msLower > MS_LIMIT)) return d;
  return {
    label: "aggressive-tuning",
    confidence: CONFIDENCE,
    evidence: [
      `likely aggressive tuning: ${marginLine(m)}`,
      "a possible finding, not a certain one: it rests on the configured dead time and a process model of low order; a step test of the closed loop would decide",
      ...d.evidence.filter((e) => !e.startsWith("likely ")),
    ],
  };
}
