/**
 * Routine-data assessment of a historian export uploaded on a loop's page: the engineer's daily
 * task of exporting a few days of SP/PV/MV/mode and asking what is wrong with the loop. The file is
 * read by the offline command's reader (parseAssessCsv: the same columns, names, units and time
 * formats as `npm run assess`) and assessed by its code (assessLoop) on the loop's stored
 * configuration (lib/data/assessment-configs.ts, the live assessment's too), so the console, the
 * command and the live service give the same report for the same samples and configuration. The
 * file goes to the object store like a step test's; the report is kept in the loop's record.
 * Nothing is stored unless the whole upload succeeds.
 */
import { randomUUID } from "node:crypto";
import { AssessCsvError, assessLoop, parseAssessCsv, type LoopAssessmentReport } from "@/lib/assessment";
import { dataCautions } from "@/lib/assessment/input-checks";
import { decodeText } from "@/lib/csv";
import { loadAssessmentConfigs } from "@/lib/data/assessment-configs";
import { getSequelize } from "@/lib/data/db/sequelize";
import { insertExportAssessment, selectExportAssessment, selectExportAssessments, type ExportAssessmentRow } from "@/lib/data/export-assessments";
import { readStepTestLoop } from "@/lib/data/step-tests";
import { HttpError, NotFoundError, ValidationError } from "@/lib/domain/errors";
import type { TenantContext } from "@/lib/domain/types";
import { cleanFilename } from "@/lib/step-tests/service";
import { objectStore, readStoredFile, type ObjectStore } from "@/lib/step-tests/store";
import { MAX_EXPORT_BYTES, MAX_EXPORT_ROWS } from "./limits";

export { MAX_EXPORT_BYTES, MAX_EXPORT_ROWS };

export class ExportTooLargeError extends HttpError {
  constructor(bytes: number) {
    super(413, `The file is ${(bytes / 1048576).toFixed(1)} MB; exports assessed in the console are limited to ${MAX_EXPORT_BYTES / 1048576} MB (about ${MAX_EXPORT_ROWS.toLocaleString("en-GB")} rows). Longer exports: npm run assess, or export at a coarser interval.`);
  }
}

export interface ExportAssessmentSummary {
  id: number;
  loopId: number;
  filename: string;
  rowCount: number;
  spanS: number;
  startsAt: string | null;
  endsAt: string | null;
  label: LoopAssessmentReport["diagnosis"]["label"];
  confidence: number;
  createdAt: string;
  uploadedBy: string | null;
}

export interface ExportAssessmentDetail extends ExportAssessmentSummary {
  report: LoopAssessmentReport;
  /** The export's last good PV and MV (at most PV_MV_POINTS pairs), for the PV-against-MV plot. */
  pvMv: { pv: number; mv: number }[];
}

/** Pairs kept for the PV-against-MV plot (the loop page plots its last 1,800 samples too). */
export const PV_MV_POINTS = 1_800;

const iso = (d: Date | string | null) => (d === null ? null : new Date(d).toISOString());

function summaryOf(r: ExportAssessmentRow): ExportAssessmentSummary {
  return {
    id: Number(r.id),
    loopId: Number(r.loop_id),
    filename: r.filename,
    rowCount: Number(r.row_count),
    spanS: Number(r.span_s),
    startsAt: iso(r.starts_at),
    endsAt: iso(r.ends_at),
    label: r.label as ExportAssessmentSummary["label"],
    confidence: Number(r.confidence),
    createdAt: iso(r.created_at)!,
    uploadedBy: r.uploader,
  };
}

/** The loop's configuration as the assessment reads it; 422 when the loop's settings do not make one. */
async function configOf(loopId: number) {
  const { loops, errors } = await loadAssessmentConfigs(getSequelize(), loopId);
  const l = loops.find((x) => x.loopId === loopId);
  if (l) return l.config;
  const why = errors.get(loopId);
  throw new ValidationError(why ? `The loop's settings cannot be assessed: ${why}` : "The loop is disabled: enable it to assess an export.");
}

/**
 * Reads, assesses and stores an export of the caller's loop.
 * @throws ValidationError 422 (naming the line of the first problem in the file), ExportTooLargeError
 *   413, NotFoundError 404 (a loop of another tenant or site), HttpError 503 (object store down).
 */
export async function assessExport(
  ctx: TenantContext,
  loopId: number,
  file: { name: string; bytes: Uint8Array },
  now: Date = new Date(),
  storeOverride?: ObjectStore,
): Promise<ExportAssessmentDetail> {
  const loop = await readStepTestLoop(ctx, loopId);
  if (file.bytes.length > MAX_EXPORT_BYTES) throw new ExportTooLargeError(file.bytes.length);
  const config = await configOf(loop.id);
  let parsed;
  try {
    parsed = parseAssessCsv(decodeText(file.bytes));
  } catch (e) {
    if (e instanceof AssessCsvError) throw new ValidationError(e.message);
    throw e;
  }
  if (parsed.samples.length > MAX_EXPORT_ROWS) {
    throw new ValidationError(`The export has ${parsed.samples.length.toLocaleString("en-GB")} rows; the console assesses at most ${MAX_EXPORT_ROWS.toLocaleString("en-GB")} (npm run assess takes up to a week at 1 s).`);
  }
  if (parsed.samples.length < 2) throw new ValidationError("The export holds fewer than two rows of samples.");
  const report = assessLoop(parsed.samples, config);
  // How the file was read comes first among the cautions, as in the offline command.
  report.cautions = [...parsed.cautions, ...dataCautions(parsed.samples, config), ...report.cautions];
  const first = parsed.samples[0]!.t;
  const last = parsed.samples.at(-1)!.t;
  const startMs = parsed.startTime ? Date.parse(parsed.startTime) : NaN;
  const startsAt = Number.isFinite(startMs) ? new Date(startMs) : null;
  const endsAt = startsAt ? new Date(startsAt.getTime() + (last - first) * 1000) : null;
  const filename = cleanFilename(file.name || "export.csv");
  const objectKey = `tenants/${ctx.tenantId}/loops/${loop.id}/exports/${randomUUID()}.csv`;
  const store = storeOverride ?? objectStore();
  try {
    await store.put(objectKey, file.bytes, "text/csv; charset=utf-8");
  } catch (e) {
    console.error("[exports] object store put failed", e);
    throw new HttpError(503, "The file could not be stored; nothing was saved. Try again later.");
  }
  let id: number;
  try {
    id = await insertExportAssessment(ctx, {
      loopId: loop.id,
      filename,
      objectKey,
      rowCount: parsed.samples.length,
      spanS: report.spanS,
      startsAt,
      endsAt,
      label: report.diagnosis.label,
      confidence: report.diagnosis.confidence,
      report,
      pvMv: parsed.samples
        .filter((x) => (x.quality === undefined || x.quality === "good") && Number.isFinite(x.pv) && Number.isFinite(x.mv))
        .slice(-PV_MV_POINTS)
        .map((x) => ({ pv: x.pv, mv: x.mv })),
      at: now,
    });
  } catch (e) {
    await store.delete(objectKey).catch(() => {});
    throw e;
  }
  return getExportAssessment(ctx, loop.id, id);
}

/** The loop's assessed exports, newest first. */
export async function listExportAssessments(ctx: TenantContext, loopId: number): Promise<ExportAssessmentSummary[]> {
  const loop = await readStepTestLoop(ctx, loopId);
  return (await selectExportAssessments(ctx, loop.id)).map(summaryOf);
}

/** One assessed export with its report (404 for another loop's, tenant's or site's). */
export async function getExportAssessment(ctx: TenantContext, loopId: number, id: number): Promise<ExportAssessmentDetail> {
  const loop = await readStepTestLoop(ctx, loopId);
  const row = await selectExportAssessment(ctx, loop.id, id);
  if (!row) throw new NotFoundError("Assessed export");
  const json = <T,>(v: unknown, empty: T): T => (v == null ? empty : ((typeof v === "string" ? JSON.parse(v) : v) as T));
  return { ...summaryOf(row), report: json<LoopAssessmentReport>(row.report, null as never), pvMv: json<{ pv: number; mv: number }[]>(row.pv_mv, []) };
}

/** The uploaded export as stored, byte for byte (404 when the loop, the row or the object is missing). */
export async function getExportData(ctx: TenantContext, loopId: number, id: number, storeOverride?: ObjectStore): Promise<{ filename: string; bytes: Buffer }> {
  const loop = await readStepTestLoop(ctx, loopId);
  const row = await selectExportAssessment(ctx, loop.id, id);
  if (!row) throw new NotFoundError("Assessed export");
  const bytes = await readStoredFile(storeOverride ?? objectStore(), row.object_key, "Export file");
  return { filename: row.filename, bytes };
}
