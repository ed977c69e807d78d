import { createRule, listRules, ruleSchema } from "@/lib/data/admin/notifications";
import { createRoute, readRoute } from "@/lib/auth/json-route";

export const dynamic = "force-dynamic";

export const GET = readRoute("admin", async (ctx) => ({ rules: await listRules(ctx) }));

export const POST = createRoute("admin", ruleSchema, async (ctx, body) => ({ rule: await createRule(ctx, body) }));
