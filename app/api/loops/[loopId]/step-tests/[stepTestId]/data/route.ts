/** GET /api/loops/:loopId/step-tests/:stepTestId/data — viewer: the uploaded CSV, byte for byte. */
import { csvAttachment, parseId, handle } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { getStepTestData } from "@/lib/step-tests/service";

export const dynamic = "force-dynamic";

type Params = { params: Promise<{ loopId: string; stepTestId: string }> };

export const GET = handle(async (_req: Request, { params }: Params) => {
  const ctx = await requireContext("viewer");
  const p = await params;
  const { filename, bytes } = await getStepTestData(ctx, parseId(p.loopId, "loop id"), parseId(p.stepTestId, "step test id"));
  return csvAttachment(filename, bytes);
});
