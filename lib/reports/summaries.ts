/**
 * The per-loop daily summary (loop_daily_summaries; SQL in lib/data/reports.ts): UTC days and the
 * diagnosis a summary records from the live assessment. Pure.
 *
 * The diagnosis of a loop-day is the live assessor's finding current when the day is summarised,
 * if that finding was made during the day (a finding of a later day says nothing about this one,
 * so rebuilding yesterday after midnight keeps what was written while it ran). The figures beside
 * it come from the same assessment: the oscillation index is 1 when an oscillation was detected
 * and 0 when not; the stiction likelihood 1 for "likely", 0 for "unlikely", unknown otherwise;
 * the Harris index as assessed.
 */
import type { LoopAssessmentReport } from "@/lib/assessment/types";
import type { LoopFinding } from "@/lib/domain/findings";
import { DIAGNOSIS_LABELS } from "./score";

/** Today's summaries are rebuilt this often (server/reports/index.ts), so the reports' "today so far" lags by up to this much. */
export const TODAY_REBUILD_MINUTES = 10;

const DAY_MS = 86_400_000;

/** "2026-11-30" -> [start, end) epoch ms. */
export function utcDayRange(day: string): [number, number] {
  const start = Date.parse(`${day}T00:00:00Z`);
  if (!Number.isFinite(start)) throw new Error(`"${day}" is not a date YYYY-MM-DD.`);
  return [start, start + DAY_MS];
}

export function utcDay(t: number): string {
  return new Date(t).toISOString().slice(0, 10);
}

/** The diagnosis columns of one loop-day. */
export interface SummaryDiagnosis {
  loopId: number;
  label: string;
  confidence: number | null;
  oscillationIndex: number | null;
  stictionLikelihood: number | null;
  harrisIndex: number | null;
}

/** What a summary reads of the live assessment of one loop. */
export interface LiveFindingSource {
  finding: Pick<LoopFinding, "loopId" | "at" | "label" | "confidence">;
  report?: Pick<LoopAssessmentReport, "oscillation" | "stiction" | "harrisIndex"> | null;
}

const finite = (v: number | null | undefined) => (v == null || !Number.isFinite(v) ? null : v);

/** The diagnosis a day's summary records from a live finding, or null when the finding is not of that day. */
export function summaryDiagnosisOf(day: string, src: LiveFindingSource): SummaryDiagnosis | null {
  const [from, to] = utcDayRange(day);
  const f = src.finding;
  if (!(f.at >= from && f.at < to)) return null;
  const label = (DIAGNOSIS_LABELS as readonly string[]).includes(f.label) ? f.label : "undetermined";
  const r = src.report ?? null;
  const stiction = r?.stiction.verdict === "likely" ? 1 : r?.stiction.verdict === "unlikely" ? 0 : null;
  return {
    loopId: f.loopId,
    label,
    confidence: finite(f.confidence),
    oscillationIndex: r ? (r.oscillation.detected ? 1 : 0) : null,
    stictionLikelihood: stiction,
    harrisIndex: finite(r?.harrisIndex),
  };
}
