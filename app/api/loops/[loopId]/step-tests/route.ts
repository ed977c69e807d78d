/**
 * GET  /api/loops/:loopId/step-tests — viewer: the loop's step tests, newest first.
 * POST /api/loops/:loopId/step-tests — engineer: multipart upload, field `file` (CSV, at most
 *   5 MB), optional fields `detrend` (initial | mean | linear) and `maxDeadTimeS`. 201 with the
 *   identification result; 422 with { details: { row, column, columnName } } for the first
 *   problem in the file; 413 when too large (counted while the body streams, see handle()).
 *   Nothing is stored when it fails.
 */
import { NextResponse } from "next/server";
import { parseId, handle, uploadedFile } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
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
  const file = await uploadedFile(req, MAX_CSV_BYTES, (n) => new StepTestTooLargeError(n));
  const detail = await uploadStepTest(ctx, loopId, { name: file.name || "step-test.csv", bytes: file.bytes }, { detrend: file.field("detrend") as never, maxDeadTimeS: file.field("maxDeadTimeS") as never });
  return NextResponse.json({ stepTest: detail }, { status: 201 });
}, STEP_TEST_UPLOAD_BODY);
