/** Notification rules (admin): who is e-mailed for which alarms of which operator area. */
import "server-only";
import { z } from "zod";
import { text } from "@/lib/text-input";
import { getDb } from "@/lib/data/db/sequelize";
import { NotFoundError, ValidationError } from "@/lib/domain/errors";
import { findOwned } from "@/lib/data/tenancy";
import { ALARM_PRIORITIES, type AlarmPriority, type TenantContext } from "@/lib/domain/types";
import { diffOf, inConfigTransaction, logConfigChange } from "./config-log";

export const ruleSchema = z
  .object({
    name: text().trim().min(2, "Name the rule.").max(120),
    areaId: z.number().int().positive().nullable(),
    recipients: z.array(text().trim().toLowerCase().email("Each recipient must be an e-mail address.")).min(1, "At least one recipient.").max(50),
    minPriority: z.enum(ALARM_PRIORITIES),
    escalationMinutes: z.number().int().min(1).max(24 * 60).nullable(),
    repeatMinutes: z.number().int().min(5).max(24 * 60).nullable(),
    enabled: z.boolean(),
    reason: text().trim().min(3, "Give a change reason.").max(500),
  })
  .strict();

export interface RuleDto {
  id: number;
  name: string;
  areaId: number | null;
  recipients: string[];
  minPriority: AlarmPriority;
  escalationMinutes: number | null;
  repeatMinutes: number | null;
  enabled: boolean;
}

type RuleRow = { id: number; name: string; areaId: number | null; recipients: string[] | string; minPriority: AlarmPriority; escalationMinutes: number | null; repeatMinutes: number | null; enabled: boolean };
function toDto(r: RuleRow): RuleDto {
  const recipients = typeof r.recipients === "string" ? (JSON.parse(r.recipients) as string[]) : r.recipients;
  return { id: r.id, name: r.name, areaId: r.areaId, recipients, minPriority: r.minPriority, escalationMinutes: r.escalationMinutes, repeatMinutes: r.repeatMinutes, enabled: Boolean(r.enabled) };
}

async function checkArea(ctx: TenantContext, areaId: number | null) {
  const { Area } = getDb().models;
  if (areaId != null && !(await findOwned(Area, ctx, areaId))) throw new ValidationError("areaId: no such operator area in this tenant.");
}

export async function listRules(ctx: TenantContext): Promise<RuleDto[]> {
  const { NotificationRule } = getDb().models;
  const rows = await NotificationRule.findAll({ where: { tenantId: ctx.tenantId }, order: [["id", "ASC"]] });
  return rows.map((r) => toDto(r.get({ plain: true }) as RuleRow));
}

export async function createRule(ctx: TenantContext, input: z.infer<typeof ruleSchema>): Promise<RuleDto> {
  const { NotificationRule } = getDb().models;
  await checkArea(ctx, input.areaId);
  const { reason, ...fields } = input;
  const row = await inConfigTransaction(async (transaction) => {
    const created = await NotificationRule.create({ ...fields, tenantId: ctx.tenantId }, { transaction });
    await logConfigChange(ctx, { entity: "notification_rule", entityId: created.id, diff: diffOf({}, fields), reason }, transaction);
    return created;
  });
  return toDto(row.get({ plain: true }) as RuleRow);
}

export async function updateRule(ctx: TenantContext, id: number, input: z.infer<typeof ruleSchema>): Promise<RuleDto> {
  const { NotificationRule } = getDb().models;
  const row = await findOwned(NotificationRule, ctx, id);
  if (!row) throw new NotFoundError("Notification rule");
  await checkArea(ctx, input.areaId);
  const { reason, ...fields } = input;
  const diff = diffOf(toDto(row.get({ plain: true }) as RuleRow) as unknown as Record<string, unknown>, fields);
  if (Object.keys(diff).length) {
    await inConfigTransaction(async (transaction) => {
      await row.update(fields, { transaction });
      await logConfigChange(ctx, { entity: "notification_rule", entityId: id, diff, reason }, transaction);
    });
  }
  return toDto(row.get({ plain: true }) as RuleRow);
}

export async function deleteRule(ctx: TenantContext, id: number, reason: string): Promise<void> {
  const { NotificationRule } = getDb().models;
  const row = await findOwned(NotificationRule, ctx, id);
  if (!row) throw new NotFoundError("Notification rule");
  await inConfigTransaction(async (transaction) => {
    await row.destroy({ transaction });
    await logConfigChange(ctx, { entity: "notification_rule", entityId: id, diff: { name: { from: row.name, to: null } }, reason }, transaction);
  });
}
