/** Latest routine-data findings of a tenant's loops (from `loop_assessments`), tenant- and site-scoped. */
import { selectLoopAssessment, selectTenantAssessments, loopInScope, type AssessmentRow } from "@/lib/data/work-list";
import { NotFoundError } from "@/lib/domain/errors";
import type { LiveAssessmentReport, LoopFinding } from "@/lib/domain/findings";
import type { TenantContext } from "@/lib/domain/types";
import { findingOf } from "./figures";

const parse = (r: AssessmentRow) => (typeof r.report === "string" ? JSON.parse(r.report) : r.report) as LiveAssessmentReport;

/** One finding per loop of the tenant that has been assessed. */
export async function listFindings(ctx: TenantContext): Promise<LoopFinding[]> {
  const rows = await selectTenantAssessments(ctx);
  return rows.map((r) => findingOf(Number(r.loop_id), new Date(r.assessed_at).getTime(), parse(r), Number(r.window_s)));
}

/** The loop's latest finding and full report (null before its first assessment); 404 for another tenant's loop. */
export async function loopFinding(ctx: TenantContext, loopId: number): Promise<{ finding: LoopFinding | null; report: LiveAssessmentReport | null }> {
  // another tenant's loop, or a site outside the member's scope, is a 404 like a missing loop
  if (!(await loopInScope(ctx, loopId))) throw new NotFoundError("Loop");
  const r = await selectLoopAssessment(ctx, loopId);
  if (!r) return { finding: null, report: null };
  const report = parse(r);
  return { finding: findingOf(loopId, new Date(r.assessed_at).getTime(), report, Number(r.window_s)), report };
}
