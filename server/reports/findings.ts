/**
 * The daily summaries record the live assessment's diagnosis: the routine-data finding the
 * pipeline's assessment service keeps per loop (server/assessment, `finding()` and the assessor's
 * latest result) is read when a day is summarised and written to that day's row
 * (lib/reports/summaries.ts says which finding counts for which day).
 */
import type { Sequelize } from "sequelize";
import { summarizeDay, summarizedLoopIds, writeDayDiagnoses } from "@/lib/data/reports";
import { getSequelize } from "@/lib/data/db/sequelize";
import { summaryDiagnosisOf, type LiveFindingSource, type SummaryDiagnosis } from "@/lib/reports/summaries";
import type { ServerContext } from "../context";
import { isPipelineService } from "../pipeline";

/** A loop's current live finding (with the figures of its assessment), or null. */
export type FindingLookup = (loopId: number) => LiveFindingSource | null;

/** The running pipeline's live findings, or null when no pipeline runs in this process. */
export function liveFindingsOf(ctx: Pick<ServerContext, "services">): FindingLookup | null {
  const p = ctx.services.get("pipeline");
  if (!isPipelineService(p)) return null;
  return (loopId) => {
    const finding = p.assessment.finding(loopId);
    return finding ? { finding, report: p.assessment.assessor.latestOf(loopId)?.report ?? null } : null;
  };
}

/** Summarise a UTC day and record each summarised loop's diagnosis of that day; returns loops summarised. */
export async function summarizeDayWithFindings(day: string, findings: FindingLookup | null, db: Sequelize = getSequelize()): Promise<number> {
  const n = await summarizeDay(day, db);
  if (!findings) return n;
  const diagnoses: SummaryDiagnosis[] = [];
  for (const loopId of await summarizedLoopIds(day, db)) {
    const src = findings(loopId);
    const d = src ? summaryDiagnosisOf(day, src) : null;
    if (d) diagnoses.push(d);
  }
  if (diagnoses.length) await writeDayDiagnoses(day, diagnoses, db);
  return n;
}
