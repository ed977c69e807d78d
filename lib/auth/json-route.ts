/**
 * The scaffolding of the plain read and create routes: `handle()` (error mapping, request guard),
 * the role check, the zod-checked body and the JSON answer. The route file still names the lowest
 * role it admits:
 *
 *   export const GET = readRoute("admin", async (ctx) => ({ devices: await listDevices(ctx) }));
 *   export const POST = createRoute("admin", deviceSchema, async (ctx, body) => ({ device: await createDevice(ctx, body) }));
 */
import { NextResponse } from "next/server";
import type { z } from "zod";
import type { Role, TenantContext } from "@/lib/domain/types";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody } from "@/lib/http";

/** GET: the caller's context at `minRole` or above, answered with `read(ctx)` as JSON (200). */
export function readRoute(minRole: Role, read: (ctx: TenantContext) => Promise<unknown>) {
  return handle(async () => {
    const ctx = await requireContext(minRole);
    return NextResponse.json(await read(ctx));
  });
}

/** POST: role check first, then the body checked by `schema`, answered with `create(ctx, body)` as JSON (201). */
export function createRoute<S extends z.ZodType>(
  minRole: Role,
  schema: S,
  create: (ctx: TenantContext, body: z.infer<S>) => Promise<unknown>,
  headers?: Record<string, string>,
) {
  return handle(async (req: Request) => {
    const ctx = await requireContext(minRole);
    const body = await parseBody(req, schema);
    return NextResponse.json(await create(ctx, body), { status: 201, headers });
  });
}
