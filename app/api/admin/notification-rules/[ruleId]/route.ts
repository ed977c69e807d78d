import { NextResponse } from "next/server";
import { deleteRule, ruleSchema, updateRule } from "@/lib/data/admin/notifications";
import { idParam, reasonSchema } from "@/lib/admin/route-helpers";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody } from "@/lib/http";

type P = { params: Promise<{ ruleId: string }> };

export const PUT = handle(async (req: Request, { params }: P) => {
  const ctx = await requireContext("admin");
  const id = idParam((await params).ruleId, "ruleId");
  const body = await parseBody(req, ruleSchema);
  return NextResponse.json({ rule: await updateRule(ctx, id, body) });
});

export const DELETE = handle(async (req: Request, { params }: P) => {
  const ctx = await requireContext("admin");
  const id = idParam((await params).ruleId, "ruleId");
  const { reason } = await parseBody(req, reasonSchema);
  await deleteRule(ctx, id, reason);
  return new NextResponse(null, { status: 204 });
});
