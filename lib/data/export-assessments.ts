/**
 * Assessments of uploaded historian exports in MariaDB (table export_assessments, migration 0133).
 * The parsing, the assessment and the object storage are lib/export-assessments; this is their SQL.
 * Every read is scoped to the caller's tenant and to a loop the caller may see (readStepTestLoop's
 * 404 rule, applied by the service before it reads here).
 */
import "server-only";
import { QueryTypes } from "sequelize";
import { getSequelize } from "@/lib/data/db/sequelize";
import type { TenantContext } from "@/lib/domain/types";

export interface ExportAssessmentRow {
  id: number;
  loop_id: number;
  uploaded_by: number | null;
  uploader: string | null;
  filename: string;
  object_key: string;
  row_count: number;
  span_s: number;
  starts_at: Date | null;
  ends_at: Date | null;
  label: string;
  confidence: number;
  created_at: Date;
  report?: unknown;
  pv_mv?: unknown;
}

export async function insertExportAssessment(
  ctx: Pick<TenantContext, "tenantId" | "userId">,
  f: { loopId: number; filename: string; objectKey: string; rowCount: number; spanS: number; startsAt: Date | null; endsAt: Date | null; label: string; confidence: number; report: unknown; pvMv: { pv: number; mv: number }[]; at: Date },
): Promise<number> {
  const [id] = (await getSequelize().query(
    `INSERT INTO export_assessments (tenant_id, loop_id, uploaded_by, filename, object_key, row_count, span_s, starts_at, ends_at, label, confidence, report, pv_mv, created_at)
     VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?)`,
    { replacements: [ctx.tenantId, f.loopId, ctx.userId ?? null, f.filename, f.objectKey, f.rowCount, f.spanS, f.startsAt, f.endsAt, f.label, f.confidence, JSON.stringify(f.report), JSON.stringify(f.pvMv), f.at], type: QueryTypes.INSERT },
  )) as unknown as [number, number];
  return Number(id);
}

const COLUMNS = "e.id, e.loop_id, e.uploaded_by, u.name AS uploader, e.filename, e.object_key, e.row_count, e.span_s, e.starts_at, e.ends_at, e.label, e.confidence, e.created_at";

/** The loop's assessed exports, newest first (at most 200), without their reports. */
export async function selectExportAssessments(ctx: Pick<TenantContext, "tenantId">, loopId: number): Promise<ExportAssessmentRow[]> {
  return getSequelize().query<ExportAssessmentRow>(
    `SELECT ${COLUMNS} FROM export_assessments e LEFT JOIN users u ON u.id = e.uploaded_by
      WHERE e.tenant_id = ? AND e.loop_id = ? ORDER BY e.created_at DESC, e.id DESC LIMIT 200`,
    { replacements: [ctx.tenantId, loopId], type: QueryTypes.SELECT },
  );
}

/** One assessed export of the loop with its report, or null. */
export async function selectExportAssessment(ctx: Pick<TenantContext, "tenantId">, loopId: number, id: number): Promise<ExportAssessmentRow | null> {
  const [row] = await getSequelize().query<ExportAssessmentRow>(
    `SELECT ${COLUMNS}, e.report, e.pv_mv FROM export_assessments e LEFT JOIN users u ON u.id = e.uploaded_by
      WHERE e.tenant_id = ? AND e.loop_id = ? AND e.id = ?`,
    { replacements: [ctx.tenantId, loopId, id], type: QueryTypes.SELECT },
  );
  return row ?? null;
}
