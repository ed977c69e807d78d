/**
 * An engineer's e-mail rules for the work list: rows of `notification_rules` with kind `finding`
 * (the alarm notifier reads only kind `alarm`). A rule mails its recipients when a finding opens
 * a work item of the tenant (server/assessment/service.ts); nothing reaches the operator's alarms.
 */
import { z } from "zod";
import { deleteFindingRuleRow, insertFindingRule, selectFindingRules } from "@/lib/data/work-list";
import { NotFoundError } from "@/lib/domain/errors";
import { text } from "@/lib/text-input";
import type { TenantContext } from "@/lib/domain/types";

export interface FindingRuleDto {
  id: number;
  name: string;
  recipients: string[];
  enabled: boolean;
}

export const findingRuleSchema = z
  .object({
    name: text().trim().min(1).max(200),
    recipients: z.array(z.string().trim().email().max(254)).min(1).max(20),
    enabled: z.boolean().default(true),
  })
  .strict();

export async function listFindingRules(ctx: TenantContext): Promise<FindingRuleDto[]> {
  const rows = await selectFindingRules(ctx);
  return rows.map((r) => ({
    id: Number(r.id),
    name: r.name,
    recipients: (typeof r.recipients === "string" ? JSON.parse(r.recipients) : r.recipients) as string[],
    enabled: r.enabled === true || Number(r.enabled) === 1,
  }));
}

export async function createFindingRule(ctx: TenantContext, input: z.infer<typeof findingRuleSchema>): Promise<FindingRuleDto> {
  const id = await insertFindingRule(ctx, input);
  return { id, name: input.name, recipients: input.recipients, enabled: input.enabled };
}

export async function deleteFindingRule(ctx: TenantContext, id: number): Promise<void> {
  if (!(await deleteFindingRuleRow(ctx, id))) throw new NotFoundError("Rule");
}
