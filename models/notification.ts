/**
 * Notification rules (who is told about which alarms of an area, with escalation and repeat
 * intervals) and the log of notifications sent (rate limiting and the link to the outbox).
 */
import {
  DataTypes,
  Model,
  type CreationOptional,
  type ForeignKey,
  type InferAttributes,
  type InferCreationAttributes,
  type Sequelize,
} from "sequelize";
import { enumColumn } from "./enum";
import { ALARM_PRIORITIES, type AlarmPriority } from "@/lib/domain/types";
import type { Tenant } from "./tenant";

export class NotificationRule extends Model<InferAttributes<NotificationRule>, InferCreationAttributes<NotificationRule>> {
  declare id: CreationOptional<number>;
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
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export type NotificationStatus = "sent" | "failed" | "rate-limited";

export class NotificationSent extends Model<InferAttributes<NotificationSent>, InferCreationAttributes<NotificationSent>> {
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
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      tenantId: { type: DataTypes.INTEGER, allowNull: false },
      areaId: { type: DataTypes.INTEGER, allowNull: true },
      name: { type: DataTypes.STRING(200), allowNull: false },
      kind: enumColumn(["alarm", "finding"], false, "alarm"),
      recipients: { type: DataTypes.JSON, allowNull: false },
      minPriority: enumColumn(ALARM_PRIORITIES, false, "high"),
      escalationMinutes: { type: DataTypes.INTEGER, allowNull: true, validate: { min: 1 } },
      repeatMinutes: { type: DataTypes.INTEGER, allowNull: true, validate: { min: 1 } },
      enabled: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: true },
      createdAt: DataTypes.DATE(3),
      updatedAt: DataTypes.DATE(3),
    },
    { sequelize, tableName: "notification_rules", modelName: "NotificationRule", underscored: true },
  );
  NotificationSent.init(
    {
      id: { type: DataTypes.BIGINT, autoIncrement: true, primaryKey: true },
      tenantId: { type: DataTypes.INTEGER, allowNull: false },
      ruleId: { type: DataTypes.INTEGER, allowNull: true },
      alarmId: { type: DataTypes.INTEGER, allowNull: true },
      recipient: { type: DataTypes.STRING(254), allowNull: false },
      kind: { type: DataTypes.STRING(32), allowNull: false },
      subject: { type: DataTypes.STRING(300), allowNull: false },
      status: enumColumn(["sent", "failed", "rate-limited"], false),
      messageId: { type: DataTypes.STRING(255), allowNull: true },
      error: { type: DataTypes.TEXT, allowNull: true },
      sentAt: { type: DataTypes.DATE(3), allowNull: false },
    },
    { sequelize, tableName: "notifications_sent", modelName: "NotificationSent", underscored: true, timestamps: false },
  );
  return { NotificationRule, NotificationSent };
}
