/**
 * Alarm policies, alarm points (one per loop and condition), occurrences (one row per
 * activation, for alarm-rate KPIs per operator area) and the append-only alarm event log
 * (UPDATE and DELETE refused by database triggers; `journalId` unique for idempotent replay).
 * States follow ANSI/ISA-18.2 (lib/domain/types ALARM_STATES).
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
import {
  ALARM_CONDITIONS,
  ALARM_PRIORITIES,
  ALARM_STATES,
  type AlarmCondition,
  type AlarmPriority,
  type AlarmState,
} from "@/lib/domain/types";
import type { Loop } from "./loop";
import type { Tenant } from "./tenant";

export type PolicyScope = "tenant" | "site" | "loop";

/**
 * Stored alarm levels of one scope: a partial override whose shape and meaning belong to
 * lib/domain/alarms/policy.ts (`policyOverrideSchema` validates it before it is written).
 */
export type AlarmPolicySettings = Record<string, unknown>;

export class AlarmPolicy extends Model<InferAttributes<AlarmPolicy>, InferCreationAttributes<AlarmPolicy>> {
  declare id: CreationOptional<number>;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare scope: PolicyScope;
  /** tenants.id, sites.id or loops.id according to scope. */
  declare scopeId: number;
  declare settings: AlarmPolicySettings;
  declare updatedBy: number | null;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class Alarm extends Model<InferAttributes<Alarm>, InferCreationAttributes<Alarm>> {
  declare id: CreationOptional<number>;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare loopId: ForeignKey<Loop["id"]>;
  declare condition: AlarmCondition;
  declare priority: AlarmPriority;
  declare state: CreationOptional<AlarmState>;
  /** Is the condition true now (independent of acknowledgement)? */
  declare active: CreationOptional<boolean>;
  declare shelvedUntil: CreationOptional<Date | null>;
  declare shelvedBy: CreationOptional<number | null>;
  declare suppressedReason: CreationOptional<string | null>;
  declare outOfServiceReason: CreationOptional<string | null>;
  declare value: CreationOptional<number | null>;
  declare level: CreationOptional<number | null>;
  declare message: CreationOptional<string>;
  declare activatedAt: CreationOptional<Date | null>;
  declare acknowledgedAt: CreationOptional<Date | null>;
  declare acknowledgedBy: CreationOptional<number | null>;
  declare changedAt: CreationOptional<Date>;
  /** Bumped on every state change (optimistic concurrency). */
  declare version: CreationOptional<number>;
  /** Columns of migrations/0100-alarms-point-state.ts (owned by server/alarms). */
  declare shelveReason: CreationOptional<string | null>;
  declare occurrenceOpen: CreationOptional<boolean>;
  /** Journal sequence of the last transition written (replay never moves a point backwards). */
  declare journalSeq: CreationOptional<number>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class AlarmOccurrence extends Model<InferAttributes<AlarmOccurrence>, InferCreationAttributes<AlarmOccurrence>> {
  declare id: CreationOptional<number>;
  declare alarmId: number;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare loopId: number;
  declare areaId: number | null;
  declare condition: AlarmCondition;
  declare priority: AlarmPriority;
  declare startedAt: Date;
  declare endedAt: CreationOptional<Date | null>;
  declare acknowledgedAt: CreationOptional<Date | null>;
}

export class AlarmEvent extends Model<InferAttributes<AlarmEvent>, InferCreationAttributes<AlarmEvent>> {
  declare id: CreationOptional<number>;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare alarmId: number;
  declare loopId: number;
  /** Unique id of the journal entry this row was written from. */
  declare journalId: string;
  declare at: Date;
  /** What happened: "activate", "clear", "acknowledge", "shelve", "unshelve", "suppress", ... */
  declare kind: string;
  declare fromState: AlarmState | null;
  declare toState: AlarmState | null;
  /** Who (null for the system). */
  declare userId: number | null;
  declare comment: string | null;
  declare data: Record<string, unknown> | null;
}

const enumOf = (values: readonly string[], allowNull = false) => enumColumn(values, allowNull);

export function initAlarmModels(sequelize: Sequelize) {
  AlarmPolicy.init(
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      tenantId: { type: DataTypes.INTEGER, allowNull: false },
      scope: enumOf(["tenant", "site", "loop"]),
      scopeId: { type: DataTypes.INTEGER, allowNull: false },
      settings: { type: DataTypes.JSON, allowNull: false },
      updatedBy: { type: DataTypes.INTEGER, allowNull: true },
      createdAt: DataTypes.DATE(3),
      updatedAt: DataTypes.DATE(3),
    },
    { sequelize, tableName: "alarm_policies", modelName: "AlarmPolicy", underscored: true },
  );
  Alarm.init(
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      tenantId: { type: DataTypes.INTEGER, allowNull: false },
      loopId: { type: DataTypes.INTEGER, allowNull: false },
      condition: enumOf(ALARM_CONDITIONS),
      priority: enumOf(ALARM_PRIORITIES),
      state: enumColumn(ALARM_STATES, false, "normal"),
      active: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      shelvedUntil: { type: DataTypes.DATE(3), allowNull: true },
      shelvedBy: { type: DataTypes.INTEGER, allowNull: true },
      suppressedReason: { type: DataTypes.STRING(500), allowNull: true },
      outOfServiceReason: { type: DataTypes.STRING(500), allowNull: true },
      value: { type: DataTypes.DOUBLE, allowNull: true },
      level: { type: DataTypes.DOUBLE, allowNull: true },
      message: { type: DataTypes.STRING(500), allowNull: false, defaultValue: "" },
      activatedAt: { type: DataTypes.DATE(3), allowNull: true },
      acknowledgedAt: { type: DataTypes.DATE(3), allowNull: true },
      acknowledgedBy: { type: DataTypes.INTEGER, allowNull: true },
      changedAt: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
      version: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      shelveReason: { type: DataTypes.STRING(1000), allowNull: true },
      occurrenceOpen: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      journalSeq: { type: DataTypes.BIGINT, allowNull: false, defaultValue: 0 },
      createdAt: DataTypes.DATE(3),
      updatedAt: DataTypes.DATE(3),
    },
    { sequelize, tableName: "alarms", modelName: "Alarm", underscored: true },
  );
  AlarmOccurrence.init(
    {
      id: { type: DataTypes.BIGINT, autoIncrement: true, primaryKey: true },
      alarmId: { type: DataTypes.INTEGER, allowNull: false },
      tenantId: { type: DataTypes.INTEGER, allowNull: false },
      loopId: { type: DataTypes.INTEGER, allowNull: false },
      areaId: { type: DataTypes.INTEGER, allowNull: true },
      condition: enumOf(ALARM_CONDITIONS),
      priority: enumOf(ALARM_PRIORITIES),
      startedAt: { type: DataTypes.DATE(3), allowNull: false },
      endedAt: { type: DataTypes.DATE(3), allowNull: true },
      acknowledgedAt: { type: DataTypes.DATE(3), allowNull: true },
    },
    { sequelize, tableName: "alarm_occurrences", modelName: "AlarmOccurrence", underscored: true, timestamps: false },
  );
  AlarmEvent.init(
    {
      id: { type: DataTypes.BIGINT, autoIncrement: true, primaryKey: true },
      tenantId: { type: DataTypes.INTEGER, allowNull: false },
      alarmId: { type: DataTypes.INTEGER, allowNull: false },
      loopId: { type: DataTypes.INTEGER, allowNull: false },
      journalId: { type: DataTypes.STRING(64), allowNull: false, unique: true },
      at: { type: DataTypes.DATE(3), allowNull: false },
      kind: { type: DataTypes.STRING(40), allowNull: false },
      fromState: enumOf(ALARM_STATES, true),
      toState: enumOf(ALARM_STATES, true),
      userId: { type: DataTypes.INTEGER, allowNull: true },
      comment: { type: DataTypes.TEXT, allowNull: true },
      data: { type: DataTypes.JSON, allowNull: true },
    },
    { sequelize, tableName: "alarm_events", modelName: "AlarmEvent", underscored: true, timestamps: false },
  );
  return { AlarmPolicy, Alarm, AlarmOccurrence, AlarmEvent };
}
