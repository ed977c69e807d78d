/** The figures a work item keeps from an assessment (at open and the latest), and the finding brief. */
import type { LoopAssessmentReport } from "@/lib/assessment/types";
import type { FindingFigures, LoopFinding } from "@/lib/domain/findings";

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

export function findingOf(loopId: number, at: number, report: LoopAssessmentReport, windowS: number): LoopFinding {
  const d = report.diagnosis;
  return {
    loopId,
    at,
    label: d.label,
    confidence: d.confidence,
    needsS: d.needsS ?? null,
    reason: d.reason ?? null,
    evidence: d.evidence,
    windowS,
  };
}
