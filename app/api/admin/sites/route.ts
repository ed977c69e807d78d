import { createSite, listSites, siteSchema } from "@/lib/data/admin/sites";
import { createRoute, readRoute } from "@/lib/auth/json-route";

export const dynamic = "force-dynamic";

/** Sites with their operator areas; every role may read them (forms and filters need them). */
export const GET = readRoute("viewer", async (ctx) => ({ sites: await listSites(ctx) }));

export const POST = createRoute("admin", siteSchema, async (ctx, body) => ({ site: await createSite(ctx, body) }));
