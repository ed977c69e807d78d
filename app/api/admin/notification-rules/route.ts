import { NextResponse } from "next/server";
import { createRule, listRules, ruleSchema } from "@/lib/data/admin/notifications";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody } from "@/lib/http";

export const dynamic = "force-dynamic";

export const GET = handle(async () => {
  const ctx = await requireContext("admin");
  return NextResponse.json({ rules: await listRules(ctx) });
});

export const POST = handle(async (req: Request) => {
  const ctx = await requireContext("admin");
  const body = await parseBody(req, ruleSchema);
  return NextResponse.json({ rule: await createRule(ctx, body) }, { status: 201 });
});
