/**
 * GET /api/reports/subscriptions — the caller's own report e-mails (viewer).
 * POST /api/reports/subscriptions {report, cadence, siteId?} — subscribe oneself: the handover per
 * shift for a site, worst loops or fleet health weekly (viewer). Mail goes only to the subscriber,
 * a member of the tenant, and stops when the membership ends.
 */
import { createRoute, readRoute } from "@/lib/auth/json-route";
import { listMySubscriptions, subscribe, subscriptionInputSchema } from "@/lib/reports/delivery";

export const dynamic = "force-dynamic";

export const GET = readRoute("viewer", async (ctx) => ({ subscriptions: await listMySubscriptions(ctx) }));

export const POST = createRoute("viewer", subscriptionInputSchema, async (ctx, input) => ({ subscription: await subscribe(ctx, input) }));
