/** Latest routine-data findings of a tenant's loops (from `loop_assessments`), tenant-scoped. */
import { QueryTypes } from "sequelize";
import type { LoopAssessmentReport } from "@/lib/assessment/types";
import { getDb } from "@/lib/db/sequelize";
import { NotFoundError } from "@/lib/domain/errors";
import type { LoopFinding } from "@/lib/domain/findings";
import { scoped, siteScopeSql } from "@/lib/tenancy";
import type { TenantContext } from "@/lib/domain/types";
import { findingOf } from "./figures";

type Row = { loop_id: number; assessed_at: Date; window_s: number; report: unknown };
const parse = (r: Row) =>
  (typeof r.report === "string" ? JSON.parse(r.report) : r.report) as LoopAssessmentReport;

/** One finding per loop of the tenant that has been assessed. */
export async function listFindings(ctx: TenantContext): Promise<LoopFinding[]> {
  const site = siteScopeSql(ctx, "l.site_id");
  const rows = await getDb().sequelize.query<Row>(
    `SELECT a.loop_id, a.assessed_at, a.window_s, a.report FROM loop_assessments a JOIN loops l ON l.id = a.loop_id AND l.tenant_id = a.tenant_id
      WHERE a.tenant_id = ?${site.sql} ORDER BY a.loop_id`,
    {
      replacements: [scoped(ctx).tenantId, ...site.args],
      type: QueryTypes.SELECT,
    },
  );
  return rows.map((r) =>
    findingOf(Number(r.loop_id), new Date(r.assessed_at).getTime(), parse(r), Number(r.window_s)),
  );
}

/** The loop's latest finding and full report (null before its first assessment); 404 for another tenant's loop. */
export async function loopFinding(
  ctx: TenantContext,
  loopId: number,
): Promise<{ finding: LoopFinding | null; report: LoopAssessmentReport | null }> {
  const { sequelize } = getDb();
  const { tenantId } = scoped(ctx);
  // another tenant's loop, or a site outside the member's scope, is a 404 like a missing loop
  const site = siteScopeSql(ctx, "site_id");
  const [loop] = await sequelize.query(
    `SELECT id FROM loops WHERE id = ? AND tenant_id = ?${site.sql}`,
    { replacements: [loopId, tenantId, ...site.args], type: QueryTypes.SELECT },
  );
  if (!loop) throw new NotFoundError("Loop");
  const [r] = await sequelize.query<Row>(
    "SELECT loop_id, assessed_at, window_s, report FROM loop_assessments WHERE loop_id = ? AND tenant_id = ?",
    {
      replacements: [loopId, tenantId],
      type: QueryTypes.SELECT,
    },
  );
  if (!r) return { finding: null, report: null };
  const report = parse(r);
  return {
    finding: findingOf(loopId, new Date(r.assessed_at).getTime(), report, Number(r.window_s)),
    report,
  };
}
