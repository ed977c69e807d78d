/**
 * Notification rules (who is told about which alarms of an area, with escalation and repeat
 * intervals) and the log of notifications sent (rate limiting and the link to the outbox).
 */
import { DataTypes, type CreationOptional, type ForeignKey, type Sequelize } from "sequelize";
import { Row, TimedRow } from "./base";
import { date, flag, int, json, serial, string, tableOptions, timestamps } from "./columns";
import { enumColumn } from "./enum";
import { ALARM_PRIORITIES, type AlarmPriority } from "@/lib/domain/types";
import type { Tenant } from "./tenant";

export class NotificationRule extends TimedRow<NotificationRule> {
  declare tenantId: ForeignKey<Tenant["id"]>;
  /** null = every area of the tenant. */
  declare areaId: number | null;
  declare name: string;
  /** `alarm`: the operator's alarm mails; `finding`: an engineer's work-list mails (migration 0130). */
  declare kind: CreationOptional<"alarm" | "finding">;
  /** E-mail addresses. */
  declare recipients: string[];
  /** Notify for this priority and more urgent ones. */
  declare minPriority: CreationOptional<AlarmPriority>;
  /** Escalate when still unacknowledged after this many minutes (null = never). */
  declare escalationMinutes: number | null;
  /** Repeat while unacknowledged every this many minutes (null = never). */
  declare repeatMinutes: number | null;
  declare enabled: CreationOptional<boolean>;
}

export type NotificationStatus = "sent" | "failed" | "rate-limited";

export class NotificationSent extends Row<NotificationSent> {
  declare id: CreationOptional<number>;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare ruleId: number | null;
  declare alarmId: number | null;
  declare recipient: string;
  /** "initial", "escalation", "repeat", "invitation", ... */
  declare kind: string;
  declare subject: string;
  declare status: NotificationStatus;
  declare messageId: string | null;
  declare error: string | null;
  declare sentAt: Date;
}

export function initNotificationModels(sequelize: Sequelize) {
  NotificationRule.init(
    {
      id: serial(),
      tenantId: int(),
      areaId: int(true),
      name: string(200),
      kind: enumColumn(["alarm", "finding"], false, "alarm"),
      recipients: json(),
      minPriority: enumColumn(ALARM_PRIORITIES, false, "high"),
      escalationMinutes: { type: DataTypes.INTEGER, allowNull: true, validate: { min: 1 } },
      repeatMinutes: { type: DataTypes.INTEGER, allowNull: true, validate: { min: 1 } },
      enabled: flag(true),
      ...timestamps(),
    },
    tableOptions(sequelize, "notification_rules", "NotificationRule"),
  );
  NotificationSent.init(
    {
      id: serial(true),
      tenantId: int(),
      ruleId: int(true),
      alarmId: int(true),
      recipient: string(254),
      kind: string(32),
      subject: string(300),
      status: enumColumn(["sent", "failed", "rate-limited"], false),
      messageId: string(255, true),
      error: { type: DataTypes.TEXT, allowNull: true },
      sentAt: date(),
    },
    tableOptions(sequelize, "notifications_sent", "NotificationSent", { timestamps: false }),
  );
  return { NotificationRule, NotificationSent };
}
