/** GET /api/session — who am I, in which tenant, with which role, and my other tenants. */
import { NextResponse } from "next/server";
import { handle } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { listMemberships } from "@/lib/data/auth";

export const GET = handle(async () => {
  const ctx = await requireContext("viewer");
  const memberships = await listMemberships(ctx.userId);
  return NextResponse.json({ context: ctx, memberships });
});
