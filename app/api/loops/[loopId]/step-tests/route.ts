/**
 * GET  /api/loops/:loopId/step-tests — viewer: the loop's step tests, newest first.
 * POST /api/loops/:loopId/step-tests — engineer: multipart upload, field `file` (CSV, at most
 *   5 MB), optional fields `detrend` (initial | mean | linear) and `maxDeadTimeS`. 201 with the
 *   identification result; 422 with { details: { row, column, columnName } } for the first
 *   problem in the file; 413 when too large (counted while the body streams, see handle()).
 *   Nothing is stored when it fails.
 */
import { NextResponse } from "next/server";
import { parseId, handle } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { ValidationError } from "@/lib/domain/errors";
import { STEP_TEST_UPLOAD_BODY } from "@/lib/request-guard";
import { MAX_CSV_BYTES, StepTestTooLargeError } from "@/lib/step-tests/csv";
import { listStepTests, uploadStepTest } from "@/lib/step-tests/service";

export const dynamic = "force-dynamic";

type Params = { params: Promise<{ loopId: string }> };

export const GET = handle(async (_req: Request, { params }: Params) => {
  const ctx = await requireContext("viewer");
  const loopId = parseId((await params).loopId, "loop id");
  return NextResponse.json({ stepTests: await listStepTests(ctx, loopId) });
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
  if (file.size > MAX_CSV_BYTES) throw new StepTestTooLargeError(file.size);
  const bytes = new Uint8Array(await file.arrayBuffer());
  const opt = (k: string) => {
    const v = form.get(k);
    return typeof v === "string" && v.trim() !== "" ? v.trim() : undefined;
  };
  const detail = await uploadStepTest(ctx, loopId, { name: file.name || "step-test.csv", bytes }, { detrend: opt("detrend") as never, maxDeadTimeS: opt("maxDeadTimeS") as never });
  return NextResponse.json({ stepTest: detail }, { status: 201 });
}, STEP_TEST_UPLOAD_BODY);
