/**
 * GET  /api/loops/:loopId/exports — viewer: the loop's assessed historian exports, newest first.
 * POST /api/loops/:loopId/exports — engineer: multipart upload, field `file` (CSV as `npm run assess`
 *   reads it: t,sp,pv,mv[,mode]; at most MAX_EXPORT_BYTES). 201 with the assessment (the offline
 *   command's report on the loop's stored configuration); 422 naming the line of the first problem
 *   in the file; 413 when too large. Nothing is stored when it fails.
 */
import { NextResponse } from "next/server";
import { parseId, handle } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { ValidationError } from "@/lib/domain/errors";
import { EXPORT_UPLOAD_BODY } from "@/lib/request-guard";
import { assessExport, ExportTooLargeError, listExportAssessments, MAX_EXPORT_BYTES } from "@/lib/export-assessments/service";

export const dynamic = "force-dynamic";

type Params = { params: Promise<{ loopId: string }> };

export const GET = handle(async (_req: Request, { params }: Params) => {
  const ctx = await requireContext("viewer");
  const loopId = parseId((await params).loopId, "loop id");
  return NextResponse.json({ exports: await listExportAssessments(ctx, loopId) });
});

export const POST = handle(async (req: Request, { params }: Params) => {
  const ctx = await requireContext("engineer");
  const loopId = parseId((await params).loopId, "loop id");
  if (!(req.headers.get("content-type") ?? "").toLowerCase().startsWith("multipart/form-data")) {
    throw new ValidationError("Send the file as multipart/form-data with the field \"file\".");
  }
  let form: FormData;
  try {
    form = await req.formData();
  } catch {
    throw new ValidationError("The upload could not be read as multipart/form-data.");
  }
  const file = form.get("file");
  if (!file || typeof file === "string") throw new ValidationError("The field \"file\" must hold the CSV file.");
  if (file.size > MAX_EXPORT_BYTES) throw new ExportTooLargeError(file.size);
  const bytes = new Uint8Array(await file.arrayBuffer());
  const assessed = await assessExport(ctx, loopId, { name: file.name || "export.csv", bytes });
  return NextResponse.json({ export: assessed }, { status: 201 });
}, EXPORT_UPLOAD_BODY);
