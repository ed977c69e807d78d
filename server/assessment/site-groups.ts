/**
 * Site period grouping (docs/assessment.md, "Live use"): loops of one site whose oscillations share
 * a period within ±5 % are grouped before one valve is blamed. A cycle that travels through a
 * plant (a common upstream disturbance, a recycle, an interacting unit) shows in every loop it
 * reaches with the same period, while each sticking valve cycles at a period of its own (set by its
 * stick band, slip jump and the loop's tuning). So a "likely sticking valve" on a loop whose period
 * other loops of the site share becomes a shared oscillation — a candidate outside disturbance with
 * the group listed in its evidence — until the common source is found. Plant-wide oscillation
 * analysis groups loops by period the same way (Thornhill, Huang & Zhang 2003 group by the
 * period and regularity of the error's autocorrelation; from memory); the ±5 % band is the tolerance
 * the issue names, and the rest of the rule is ours. Pure: no I/O.
 */
import type { Diagnosis, LoopAssessmentReport } from "@/lib/assessment/types";
import type { SharedOscillation } from "@/lib/domain/findings";

/** Periods agree when the longer is at most this much longer than the shorter. */
export const SHARED_PERIOD_TOLERANCE = 0.05;
/** Confidence a shared oscillation is reported with at most (it names a candidate, not a source). */
export const SHARED_CONFIDENCE = 0.7;

/** The latest oscillation seen on a loop of a site. */
export interface PeriodPeer {
  loopId: number;
  tag: string;
  siteId: number;
  /** Period of the detected oscillation, s. */
  periodS: number;
  /** Epoch ms of the assessment that saw it. */
  at: number;
  /** Span of that assessment's window, s. */
  windowS: number;
}

/** Whether two periods agree within the tolerance (symmetric). */
export function periodsAgree(a: number, b: number, tolerance = SHARED_PERIOD_TOLERANCE): boolean {
  if (!(a > 0) || !(b > 0)) return false;
  return Math.max(a, b) / Math.min(a, b) <= 1 + tolerance + 1e-12;
}

/**
 * The other loops of `loop`'s site that oscillate with its period (±5 %), in the current time:
 * a peer counts while its assessment's window still overlaps this one (at most one window length
 * old, the longer of the two windows). Null when the loop does not oscillate or has no peer.
 */
export function sharedOscillationOf(
  loop: { loopId: number; siteId: number; periodS: number | null; at: number; windowS: number },
  peers: Iterable<PeriodPeer>,
): SharedOscillation | null {
  if (loop.periodS === null || !(loop.periodS > 0)) return null;
  const group: SharedOscillation["loops"] = [];
  for (const p of peers) {
    if (p.loopId === loop.loopId || p.siteId !== loop.siteId) continue;
    if (loop.at - p.at > 1000 * Math.max(loop.windowS, p.windowS)) continue;
    if (periodsAgree(loop.periodS, p.periodS)) group.push({ loopId: p.loopId, tag: p.tag, periodS: p.periodS });
  }
  if (!group.length) return null;
  group.sort((a, b) => a.tag.localeCompare(b.tag));
  return { periodS: loop.periodS, loops: group };
}

const fmtS = (s: number) => `${s < 10 ? s.toFixed(1) : s.toFixed(0)} s`;

/**
 * The report with the group attached (`sharedOscillation`, absent without a group) and, when its verdict blamed this
 * loop's valve, the verdict turned into a shared oscillation from outside the loop. The stiction
 * figures themselves stay as measured (report.stiction), so the evidence is not lost.
 */
export function applySharedOscillation<R extends LoopAssessmentReport>(report: R, shared: SharedOscillation | null): R & { sharedOscillation?: SharedOscillation } {
  // no group: the report exactly as lib/assessment made it (live = offline on the same samples)
  if (!shared) return report;
  const others = shared.loops.map((l) => `${l.tag} (${fmtS(l.periodS)})`).join(", ");
  const line = `likely a shared oscillation: ${others} of this site cycle with this loop's period (${fmtS(shared.periodS)}, within ±${Math.round(100 * SHARED_PERIOD_TOLERANCE)} %)`;
  const d = report.diagnosis;
  if (d.label !== "valve-stiction") {
    return { ...report, diagnosis: { ...d, evidence: [...d.evidence, line] }, sharedOscillation: shared };
  }
  const diagnosis: Diagnosis = {
    label: "external-disturbance",
    confidence: Math.min(d.confidence, SHARED_CONFIDENCE),
    evidence: [
      line,
      "the stiction tests on this loop alone read a sticking valve; with the period shared, find the common source before blaming one valve (it may be this valve, carried to the others, or a disturbance reaching them all)",
      ...d.evidence,
    ],
  };
  return { ...report, diagnosis, sharedOscillation: shared };
}
