/**
 * GET  /api/work-list/rules — engineer: the tenant's e-mail rules for work-list findings.
 * POST /api/work-list/rules — engineer: { name, recipients[], enabled? } -> 201.
 */
import { NextResponse } from "next/server";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody } from "@/lib/http";
import { createFindingRule, findingRuleSchema, listFindingRules } from "@/lib/work-list/rules";

export const dynamic = "force-dynamic";

export const GET = handle(async () => {
  const ctx = await requireContext("engineer");
  return NextResponse.json({ rules: await listFindingRules(ctx) });
});

export const POST = handle(async (req: Request) => {
  const ctx = await requireContext("engineer");
  const input = await parseBody(req, findingRuleSchema);
  return NextResponse.json({ rule: await createFindingRule(ctx, input) }, { status: 201 });
});
