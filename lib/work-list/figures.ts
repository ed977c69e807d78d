/** The figures a work item keeps from an assessment (at open and the latest), and the verdict a loop's assessment carries. */
import type { LoopAssessmentReport } from "@/lib/assessment/types";
import type { FindingFigures, LiveAssessmentReport, LoopFinding, RoutineFindings } from "@/lib/domain/findings";

const round = (v: number | null, digits = 4): number | null => (v === null || !Number.isFinite(v) ? null : Number(v.toPrecision(digits)));

export function figuresOf(report: LoopAssessmentReport, at: number): FindingFigures {
  return {
    at,
    label: report.diagnosis.label,
    confidence: round(report.diagnosis.confidence, 3) ?? 0,
    oscillationPeriodS: report.oscillation.detected ? round(report.oscillation.periodS) : null,
    oscillationAmplitude: report.oscillation.detected ? round(report.oscillation.amplitude) : null,
    harrisIndex: round(report.harrisIndex),
    stiction: report.stiction.verdict,
    serviceFactor: round(report.serviceFactor, 3),
    saturation: round(report.saturation, 3) ?? 0,
    valveTravelPctPerHour: round(report.details.valveTravelPctPerHour) ?? 0,
    valveReversalsPerHour: round(report.details.valveReversalsPerHour) ?? 0,
    idleIndex: round(report.details.idleIndex, 3),
  };
}

/** The verdict of a live assessment as the loop's assessment carries it (`LoopAssessment.routine`). */
export function routineOf(report: LiveAssessmentReport, at: number, windowS: number): RoutineFindings {
  const d = report.diagnosis;
  return {
    at,
    label: d.label,
    confidence: d.confidence,
    needsS: d.needsS ?? null,
    reason: d.reason ?? null,
    evidence: d.evidence,
    windowS,
    oscillationPeriodS: report.oscillation.detected ? report.oscillation.periodS : null,
    harrisIndex: report.harrisIndex,
    stiction: report.stiction.verdict,
    sharedOscillation: report.sharedOscillation ?? null,
  };
}

export function findingOf(loopId: number, at: number, report: LiveAssessmentReport, windowS: number): LoopFinding {
  return { loopId, ...routineOf(report, at, windowS) };
}
