/**
 * POST /api/loops/:loopId/step-tests/:stepTestId/apply — engineer: apply the test's proposal to
 * the loop's own estimation settings. Body { reason, mocReference?, apply: ["estimationPeriod" |
 * "modelStructure", ...] }; logged in config_changes. Rimguard never writes to a controller.
 */
import { NextResponse } from "next/server";
import { parseId, handle, parseBody } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { applySchema, applyStepTestProposal } from "@/lib/step-tests/service";

export const dynamic = "force-dynamic";

type Params = { params: Promise<{ loopId: string; stepTestId: string }> };

export const POST = handle(async (req: Request, { params }: Params) => {
  const ctx = await requireContext("engineer");
  const p = await params;
  const loopId = parseId(p.loopId, "loop id");
  const stepTestId = parseId(p.stepTestId, "step test id");
  const body = await parseBody(req, applySchema);
  return NextResponse.json(await applyStepTestProposal(ctx, loopId, stepTestId, body));
});
