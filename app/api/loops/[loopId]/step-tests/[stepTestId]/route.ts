/** GET /api/loops/:loopId/step-tests/:stepTestId — viewer: one step test with its full result. */
import { NextResponse } from "next/server";
import { parseId, handle } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { getStepTest } from "@/lib/step-tests/service";

export const dynamic = "force-dynamic";

type Params = { params: Promise<{ loopId: string; stepTestId: string }> };

export const GET = handle(async (_req: Request, { params }: Params) => {
  const ctx = await requireContext("viewer");
  const p = await params;
  const detail = await getStepTest(ctx, parseId(p.loopId, "loop id"), parseId(p.stepTestId, "step test id"));
  return NextResponse.json({ stepTest: detail });
});
