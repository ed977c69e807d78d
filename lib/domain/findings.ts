/**
 * A loop's routine-data finding as screens show it (browser-safe): the diagnosis of the latest
 * live assessment, without the full report. Findings are engineering work, never alarms.
 */
import type { DiagnosisLabel, LoopAssessmentReport, StictionVerdict } from "@/lib/assessment/types";

/** Loops of one site whose oscillations share a period (±5 %): one source is more likely than one valve each. */
export interface SharedOscillation {
  /** The loop's own oscillation period, s. */
  periodS: number;
  /** The other loops of the site in the group, with their periods (s). */
  loops: { loopId: number; tag: string; periodS: number }[];
}

/** A live assessment's report: lib/assessment's, with the site's period group (stored as one JSON). */
export type LiveAssessmentReport = LoopAssessmentReport & { sharedOscillation?: SharedOscillation | null };

/**
 * The live routine assessment's latest verdict on a loop as the tracker carries it in the loop's
 * assessment (`LoopAssessment.routine`, lib/domain/assessment.ts): set by the live assessor
 * (server/assessment), read by the API, the live summary and every page; nothing recomputes it.
 */
export interface RoutineFindings {
  /** Epoch ms of the assessment. */
  at: number;
  label: DiagnosisLabel;
  /** 0..1. */
  confidence: number;
  /** For `undetermined`: more data time wanted, s. */
  needsS: number | null;
  reason: string | null;
  evidence: string[];
  /** Span of the window assessed, s. */
  windowS: number;
  /** Period of a detected oscillation, s. */
  oscillationPeriodS: number | null;
  /** Harris index (null without the loop's dead time, or withheld). */
  harrisIndex: number | null;
  stiction: StictionVerdict;
  /** Set when other loops of the site oscillate with the same period (±5 %). */
  sharedOscillation: SharedOscillation | null;
}

/** What the live summary (`loop:state`), the tiles, the loop list and the worst-first order read. */
export type RoutineBrief = Pick<RoutineFindings, "at" | "label" | "confidence" | "needsS">;

/** A loop's finding as the work list and `loop:finding` carry it. */
export interface LoopFinding extends RoutineFindings {
  loopId: number;
}

/** Confidence from which a finding is shown without "likely" (ours). */
export const CERTAIN_CONFIDENCE = 0.9;
/** Confidence above which a finding opens a work-list item (ours). */
export const WORK_ITEM_CONFIDENCE = 0.6;
/** Causes inferred from routine data: always worded "likely …". */
export const INFERRED_LABELS: readonly DiagnosisLabel[] = ["aggressive-tuning", "sluggish-tuning", "valve-stiction", "external-disturbance", "sensor-fault"];
/** Verdicts that are not engineering work. */
export const NO_WORK_LABELS: readonly DiagnosisLabel[] = ["healthy", "undetermined"];

export const FINDING_WORDS: Record<DiagnosisLabel, string> = {
  healthy: "healthy",
  "aggressive-tuning": "aggressive tuning",
  "sluggish-tuning": "sluggish tuning",
  "valve-stiction": "sticking valve",
  "external-disturbance": "outside disturbance",
  saturated: "saturation",
  "sensor-fault": "sensor fault",
  manual: "in manual",
  undetermined: "not judged yet",
};

/** "about 25 min" / "about 2 h" for a data time still needed. */
export function formatNeeded(needsS: number | null): string | null {
  if (needsS === null || !Number.isFinite(needsS) || needsS <= 0) return null;
  if (needsS < 90) return "about 1 min";
  if (needsS < 5_400) return `about ${Math.round(needsS / 60)} min`;
  return `about ${Math.round(needsS / 3_600)} h`;
}

/** The words a tile shows: "likely sticking valve", "not judged yet · about 25 min". */
export function findingPhrase(f: Pick<LoopFinding, "label" | "confidence" | "needsS">): string {
  if (f.label === "undetermined") {
    const need = formatNeeded(f.needsS);
    return need ? `not judged yet · ${need}` : "not judged yet";
  }
  const word = FINDING_WORDS[f.label];
  if (f.label === "healthy") return word;
  // A cause read from routine data is an inference at any confidence (the evidence lines say
  // "likely" too); only what the data shows directly (manual, saturation) may read plain.
  if (INFERRED_LABELS.includes(f.label)) return `likely ${word}`;
  return f.confidence >= CERTAIN_CONFIDENCE ? word : `likely ${word}`;
}

/**
 * Rank of a finding in the worst-first order (lib/client/order.ts): 0 for one that is engineering
 * work (it opens a work-list item: not healthy or not-yet, confidence above 0.6), else 1.
 */
export function findingRank(f: Pick<RoutineFindings, "label" | "confidence"> | null | undefined): 0 | 1 {
  return f && opensWorkItem(f) ? 0 : 1;
}

/** Whether a finding opens or updates a work-list item. */
export function opensWorkItem(f: Pick<LoopFinding, "label" | "confidence">): boolean {
  return !NO_WORK_LABELS.includes(f.label) && f.confidence > WORK_ITEM_CONFIDENCE;
}

/** The figures kept with a work item (before and after a change). */
export interface FindingFigures {
  at: number;
  label: DiagnosisLabel;
  confidence: number;
  oscillationPeriodS: number | null;
  oscillationAmplitude: number | null;
  harrisIndex: number | null;
  stiction: string;
  serviceFactor: number | null;
  saturation: number;
  valveTravelPctPerHour: number;
  valveReversalsPerHour: number;
  idleIndex: number | null;
}
