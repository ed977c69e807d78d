import { NextResponse } from "next/server";
import { z } from "zod";
import { listConfigChanges } from "@/lib/data/admin/config-log";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseQuery } from "@/lib/http";

export const dynamic = "force-dynamic";

const q = z.object({
  entity: z.string().max(40).optional(),
  entityId: z.coerce.number().int().positive().optional(),
  limit: z.coerce.number().int().min(1).max(500).optional(),
});

/** The configuration change log of the tenant (engineers and admins). */
export const GET = handle(async (req: Request) => {
  const ctx = await requireContext("engineer");
  return NextResponse.json({ changes: await listConfigChanges(ctx, parseQuery(req, q)) });
});
