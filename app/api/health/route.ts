/**
 * GET /api/health — the registered services' health, unauthenticated (no tenant data in it).
 * 200 when everything is ok or degraded, 503 when anything is critical or down, or when no
 * custom server runs in this process.
 */
import { NextResponse } from "next/server";
import { collectHealth } from "@/lib/health";
import { getServerContext } from "@/lib/data/server-context";

export const dynamic = "force-dynamic";

export async function GET(): Promise<Response> {
  const report = await collectHealth(getServerContext());
  return NextResponse.json(report, {
    status: report.status === "ok" || report.status === "degraded" ? 200 : 503,
    headers: { "cache-control": "no-store" },
  });
}
