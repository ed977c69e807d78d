/**
 * GET /api/alarm-policies?scope=tenant|site|loop&id= — what that scope sets, the effective levels,
 * and for every loop in the scope its effective levels with their equivalents at the loop's
 * estimation period (radius, ζ, time constant).
 * PUT /api/alarm-policies?scope=&id= { settings, reason, mocReference? } — admins set tenant and
 * site levels, engineers loop levels; logged in the configuration change log; effective at once.
 */
import { NextResponse } from "next/server";
import { z } from "zod";
import { text } from "@/lib/text-input";
import { alarmApi } from "@/lib/data/server-context";
import { POLICY_SCOPES } from "@/lib/domain/alarms/policy";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody, parseQuery } from "@/lib/http";

export const dynamic = "force-dynamic";

const query = z.object({ scope: z.enum(POLICY_SCOPES), id: z.coerce.number().int().positive().optional() }).strict();
const body = z
  .object({
    settings: z.record(z.string(), z.unknown()),
    reason: text().trim().min(1, "a reason for the change is required").max(2000),
    mocReference: text().trim().max(100).nullish(),
  })
  .strict();

function scopeId(q: z.infer<typeof query>, tenantId: number): number {
  if (q.scope === "tenant") return q.id ?? tenantId;
  if (q.id == null) throw new z.ZodError([{ code: "custom", path: ["id"], message: `id is required for scope ${q.scope}`, input: undefined }]);
  return q.id;
}

export const GET = handle(async (req: Request) => {
  const ctx = await requireContext("viewer");
  const q = parseQuery(req, query);
  return NextResponse.json(await alarmApi().getPolicy(ctx, q.scope, scopeId(q, ctx.tenantId)));
});

export const PUT = handle(async (req: Request) => {
  const q = parseQuery(req, query);
  const ctx = await requireContext(q.scope === "loop" ? "engineer" : "admin");
  const b = await parseBody(req, body);
  return NextResponse.json(await alarmApi().putPolicy(ctx, q.scope, scopeId(q, ctx.tenantId), b.settings, b.reason, b.mocReference ?? null));
});
