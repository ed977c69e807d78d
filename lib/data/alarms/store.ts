/**
 * What the alarm service (server/alarms) reads and writes besides the journal drain
 * (db-writer.ts): the loops it watches, one point per loop and condition, stored policies, the
 * stored points at start, notification rules and the record of sent notifications.
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { CONDITION_PRIORITY } from "@/lib/domain/alarms/conditions";
import type { PointSnapshot } from "@/lib/domain/alarms/journal-entry";
import { ALARM_CONDITIONS, type AlarmCondition, type AlarmPriority, type AlarmState } from "@/lib/domain/types";
import { readLoops } from "@/lib/data/loop-rows";

/** What the alarm service keeps of each loop. */
export interface AlarmLoopFacts {
  id: number;
  tenantId: number;
  siteId: number;
  areaId: number | null;
  tag: string;
  estimationPeriodS: number;
  enabled: boolean;
}

/** One stored alarm point (a loop's condition) with the journal sequence it reflects. */
export interface StoredAlarmPoint {
  id: number;
  tenantId: number;
  loopId: number;
  condition: AlarmCondition;
  seq: number;
  point: PointSnapshot;
}

export interface NotificationRuleRow {
  id: number;
  tenantId: number;
  areaId: number | null;
  name: string;
  recipients: string[];
  minPriority: AlarmPriority;
  escalationMinutes: number | null;
  repeatMinutes: number | null;
}

export interface SentRow {
  tenantId: number;
  ruleId: number;
  alarmId: number;
  recipient: string;
  kind: "initial" | "escalation";
  subject: string;
  status: "sent" | "failed" | "rate-limited";
  messageId: string | null;
  error: string | null;
  sentAt: number;
}

export interface StoredPolicyRow {
  tenantId: number;
  scope: "tenant" | "site" | "loop";
  scopeId: number;
  settings: unknown;
}

const ms = (d: Date | string | null | undefined): number | null => (d == null ? null : new Date(d).getTime());

/** Every loop, as the alarm service keeps it (the one loops reader). */
export async function readAlarmLoops(sequelize: Sequelize): Promise<AlarmLoopFacts[]> {
  return (await readLoops(sequelize)).map((l) => ({
    id: l.id,
    tenantId: l.tenantId,
    siteId: l.siteId,
    areaId: l.areaId,
    tag: l.tag,
    estimationPeriodS: l.estimationPeriodS,
    enabled: l.enabled,
  }));
}

/** Make sure every loop has one point per condition (normal, inactive) without touching existing ones. */
export async function ensureAlarmPoints(sequelize: Sequelize, loops: Iterable<Pick<AlarmLoopFacts, "id" | "tenantId">>): Promise<void> {
  const values: unknown[] = [];
  const tuples: string[] = [];
  for (const l of loops) {
    for (const c of ALARM_CONDITIONS) {
      tuples.push("(?,?,?,?,'normal',0,'',UTC_TIMESTAMP(3),UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))");
      values.push(l.tenantId, l.id, c, CONDITION_PRIORITY[c]);
    }
  }
  for (let i = 0; i < tuples.length; i += 400) {
    await sequelize.query(
      "INSERT IGNORE INTO alarms (tenant_id, loop_id, `condition`, priority, state, active, message, changed_at, created_at, updated_at) VALUES " +
        tuples.slice(i, i + 400).join(","),
      { replacements: values.slice(i * 4, (i + 400) * 4) },
    );
  }
}

/** Every stored policy override (settings as stored; the caller parses them). */
export async function readPolicyRows(sequelize: Sequelize): Promise<StoredPolicyRow[]> {
  const rows = (await sequelize.query("SELECT tenant_id, scope, scope_id, settings FROM alarm_policies", {
    type: QueryTypes.SELECT,
  })) as { tenant_id: number; scope: "tenant" | "site" | "loop"; scope_id: number; settings: unknown }[];
  return rows.map((r) => ({ tenantId: Number(r.tenant_id), scope: r.scope, scopeId: Number(r.scope_id), settings: r.settings }));
}

/**
 * Every stored point of an operator alarm condition; `now` stands in for a missing change time.
 * Rows of a retired condition (`sluggish`, kept for their history) are not points any more.
 */
export async function readAlarmPoints(sequelize: Sequelize, now: number): Promise<StoredAlarmPoint[]> {
  const rows = (await sequelize.query("SELECT * FROM alarms WHERE `condition` IN (?)", {
    replacements: [[...ALARM_CONDITIONS]],
    type: QueryTypes.SELECT,
  })) as Record<string, unknown>[];
  return rows.map((r) => ({
    id: Number(r.id),
    tenantId: Number(r.tenant_id),
    loopId: Number(r.loop_id),
    condition: r.condition as AlarmCondition,
    seq: Number(r.journal_seq ?? 0),
    point: {
      state: r.state as AlarmState,
      active: Boolean(r.active),
      priority: r.priority as AlarmPriority,
      shelvedUntil: ms(r.shelved_until as Date | null),
      shelveReason: (r.shelve_reason as string | null) ?? null,
      suppressedReason: (r.suppressed_reason as string | null) ?? null,
      outOfServiceReason: (r.out_of_service_reason as string | null) ?? null,
      activatedAt: ms(r.activated_at as Date | null),
      occurrenceOpen: Boolean(r.occurrence_open),
      changedAt: ms(r.changed_at as Date) ?? now,
      value: r.value == null ? null : Number(r.value),
      level: r.level == null ? null : Number(r.level),
      message: String(r.message ?? ""),
    },
  }));
}

/** Initial notifications sent since `since` (epoch ms), per rule and loop, for the repeat limits. */
export async function readInitialNotificationsSince(sequelize: Sequelize, since: number): Promise<{ ruleId: number; loopId: number; subject: string; sentAt: number }[]> {
  const rows = (await sequelize.query(
    `SELECT ns.rule_id, a.loop_id, ns.subject, ns.sent_at FROM notifications_sent ns JOIN alarms a ON a.id = ns.alarm_id
      WHERE ns.status = 'sent' AND ns.kind = 'initial' AND ns.rule_id IS NOT NULL AND ns.sent_at >= ?`,
    { replacements: [new Date(since)], type: QueryTypes.SELECT },
  )) as { rule_id: number; loop_id: number; subject: string; sent_at: Date }[];
  return rows.map((r) => ({ ruleId: Number(r.rule_id), loopId: Number(r.loop_id), subject: r.subject, sentAt: new Date(r.sent_at).getTime() }));
}

/** Whether a rule already escalated an alarm since `since` (epoch ms). */
export async function escalationSentSince(sequelize: Sequelize, alarmId: number, ruleId: number, since: number): Promise<boolean> {
  const rows = (await sequelize.query(
    "SELECT id FROM notifications_sent WHERE alarm_id = ? AND rule_id = ? AND kind = 'escalation' AND sent_at >= ? LIMIT 1",
    { replacements: [alarmId, ruleId, new Date(since)], type: QueryTypes.SELECT },
  )) as unknown[];
  return rows.length > 0;
}

/** A tenant's enabled alarm notification rules. */
export async function readAlarmNotificationRules(sequelize: Sequelize, tenantId: number): Promise<NotificationRuleRow[]> {
  const rows = (await sequelize.query(
    "SELECT id, tenant_id, area_id, name, recipients, min_priority, escalation_minutes, repeat_minutes FROM notification_rules WHERE tenant_id = ? AND enabled = 1 AND kind = 'alarm'",
    { replacements: [tenantId], type: QueryTypes.SELECT },
  )) as Record<string, unknown>[];
  return rows.map((r) => ({
    id: Number(r.id),
    tenantId: Number(r.tenant_id),
    areaId: r.area_id == null ? null : Number(r.area_id),
    name: String(r.name),
    recipients: (typeof r.recipients === "string" ? (JSON.parse(r.recipients) as string[]) : (r.recipients as string[])) ?? [],
    minPriority: r.min_priority as AlarmPriority,
    escalationMinutes: r.escalation_minutes == null ? null : Number(r.escalation_minutes),
    repeatMinutes: r.repeat_minutes == null ? null : Number(r.repeat_minutes),
  }));
}

/** Record sent (or failed, or rate-limited) notifications. */
export async function recordNotificationsSent(sequelize: Sequelize, rows: readonly SentRow[]): Promise<void> {
  if (!rows.length) return;
  await sequelize.query(
    "INSERT INTO notifications_sent (tenant_id, rule_id, alarm_id, recipient, kind, subject, status, message_id, error, sent_at) VALUES " +
      rows.map(() => "(?,?,?,?,?,?,?,?,?,?)").join(","),
    {
      replacements: rows.flatMap((r) => [r.tenantId, r.ruleId, r.alarmId, r.recipient, r.kind, r.subject.slice(0, 300), r.status, r.messageId, r.error, new Date(r.sentAt)]),
    },
  );
}
