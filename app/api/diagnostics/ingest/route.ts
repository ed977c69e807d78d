/** GET /api/diagnostics/ingest — telemetry counters per device and reason for the admin's tenant. */
import { NextResponse } from "next/server";
import { requireContext } from "@/lib/auth/guard";
import { handle } from "@/lib/http";
import { ingestDiagnostics } from "@/lib/data/loop-diagnostics";

export const dynamic = "force-dynamic";

export const GET = handle(async () => {
  const ctx = await requireContext("admin");
  return NextResponse.json(await ingestDiagnostics(ctx));
});
