/** GET /api/loops — the tenant's loops with their live state (viewer). POST creates one (engineer). */
import { NextResponse } from "next/server";
import { createLoopHandler } from "@/lib/admin/loop-routes";
import { requireContext } from "@/lib/auth/guard";
import { handle } from "@/lib/http";
import { listLoops } from "@/lib/data/loops";

export const dynamic = "force-dynamic";

export const GET = handle(async () => {
  const ctx = await requireContext("viewer");
  return NextResponse.json({ loops: await listLoops(ctx) });
});

export const POST = createLoopHandler;
