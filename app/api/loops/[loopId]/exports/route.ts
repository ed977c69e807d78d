/**
 * GET  /api/loops/:loopId/exports — viewer: the loop's assessed historian exports, newest first.
 * POST /api/loops/:loopId/exports — engineer: multipart upload, field `file` (CSV as `npm run assess`
 *   reads it: t,sp,pv,mv[,mode]; at most MAX_EXPORT_BYTES). 201 with the assessment (the offline
 *   command's report on the loop's stored configuration); 422 naming the line of the first problem
 *   in the file; 413 when too large. Nothing is stored when it fails.
 */
import { NextResponse } from "next/server";
import { parseId, handle, uploadedFile } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
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
  const file = await uploadedFile(req, MAX_EXPORT_BYTES, (n) => new ExportTooLargeError(n));
  const assessed = await assessExport(ctx, loopId, { name: file.name || "export.csv", bytes: file.bytes });
  return NextResponse.json({ export: assessed }, { status: 201 });
}, EXPORT_UPLOAD_BODY);
