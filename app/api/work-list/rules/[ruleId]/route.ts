/** DELETE /api/work-list/rules/:ruleId — engineer: removes a finding e-mail rule (204). */
import { parseId, handle } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { deleteFindingRule } from "@/lib/work-list/rules";

export const dynamic = "force-dynamic";

type Params = { params: Promise<{ ruleId: string }> };

export const DELETE = handle(async (_req: Request, { params }: Params) => {
  const ctx = await requireContext("engineer");
  await deleteFindingRule(ctx, parseId((await params).ruleId, "rule id"));
  return new Response(null, { status: 204 });
});
