/**
 * An engineer's e-mail rules for the work list: rows of `notification_rules` with kind `finding`
 * (the alarm notifier reads only kind `alarm`). A rule mails its recipients when a finding opens
 * a work item of the tenant (server/assessment/service.ts); nothing reaches the operator's alarms.
 */
import { QueryTypes } from "sequelize";
import { z } from "zod";
import { getDb } from "@/lib/db/sequelize";
import { NotFoundError } from "@/lib/domain/errors";
import { scoped } from "@/lib/tenancy";
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
  const rows = await getDb().sequelize.query<{ id: number; name: string; recipients: unknown; enabled: number | boolean }>(
    "SELECT id, name, recipients, enabled FROM notification_rules WHERE tenant_id = ? AND kind = 'finding' ORDER BY id",
    { replacements: [scoped(ctx).tenantId], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({
    id: Number(r.id),
    name: r.name,
    recipients: (typeof r.recipients === "string" ? JSON.parse(r.recipients) : r.recipients) as string[],
    enabled: r.enabled === true || Number(r.enabled) === 1,
  }));
}

export async function createFindingRule(ctx: TenantContext, input: z.infer<typeof findingRuleSchema>): Promise<FindingRuleDto> {
  const { NotificationRule } = getDb().models;
  const row = await NotificationRule.create({
    tenantId: scoped(ctx).tenantId,
    areaId: null,
    name: input.name,
    kind: "finding",
    recipients: input.recipients,
    escalationMinutes: null,
    repeatMinutes: null,
    enabled: input.enabled,
  });
  return { id: row.id, name: row.name, recipients: input.recipients, enabled: input.enabled };
}

export async function deleteFindingRule(ctx: TenantContext, id: number): Promise<void> {
  const { NotificationRule } = getDb().models;
  const n = await NotificationRule.destroy({ where: { id, tenantId: scoped(ctx).tenantId, kind: "finding" } });
  if (!n) throw new NotFoundError("Rule");
}
