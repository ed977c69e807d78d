/** GET /api/work-list/findings — viewer: the latest routine-data finding of every assessed loop of the tenant. */
import { NextResponse } from "next/server";
import { requireContext } from "@/lib/auth/guard";
import { handle } from "@/lib/http";
import { listFindings } from "@/lib/work-list/findings";

export const dynamic = "force-dynamic";

export const GET = handle(async () => {
  const ctx = await requireContext("viewer");
  return NextResponse.json({ findings: await listFindings(ctx) });
});
