/**
 * GET  /api/work-list/rules — engineer: the tenant's e-mail rules for work-list findings.
 * POST /api/work-list/rules — engineer: { name, recipients[], enabled? } -> 201.
 */
import { createRoute, readRoute } from "@/lib/auth/json-route";
import { createFindingRule, findingRuleSchema, listFindingRules } from "@/lib/work-list/rules";

export const dynamic = "force-dynamic";

export const GET = readRoute("engineer", async (ctx) => ({ rules: await listFindingRules(ctx) }));

export const POST = createRoute("engineer", findingRuleSchema, async (ctx, input) => ({ rule: await createFindingRule(ctx, input) }));
