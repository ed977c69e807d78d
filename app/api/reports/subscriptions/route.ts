/**
 * GET /api/reports/subscriptions — the caller's own report e-mails (viewer).
 * POST /api/reports/subscriptions {report, cadence, siteId?} — subscribe oneself: the handover per
 * shift for a site, worst loops or fleet health weekly (viewer). Mail goes only to the subscriber,
 * a member of the tenant, and stops when the membership ends.
 */
import { NextResponse } from "next/server";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody } from "@/lib/http";
import { listMySubscriptions, subscribe, subscriptionInputSchema } from "@/lib/reports/delivery";

export const dynamic = "force-dynamic";

export const GET = handle(async () => {
  const ctx = await requireContext("viewer");
  return NextResponse.json({ subscriptions: await listMySubscriptions(ctx) });
});

export const POST = handle(async (req: Request) => {
  const ctx = await requireContext("viewer");
  const subscription = await subscribe(ctx, await parseBody(req, subscriptionInputSchema));
  return NextResponse.json({ subscription }, { status: 201 });
});
