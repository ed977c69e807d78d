/**
 * Alarm policies, alarm points (one per loop and operator condition; rows of a retired condition
 * stay for their history), occurrences (one row per
 * activation, for alarm-rate KPIs per operator area) and the append-only alarm event log
 * (UPDATE and DELETE refused by database triggers; `journalId` unique for idempotent replay).
 * States follow ANSI/ISA-18.2 (lib/domain/types ALARM_STATES).
 */
import { DataTypes, type CreationOptional, type ForeignKey, type Sequelize } from "sequelize";
import { Row, TimedRow } from "./base";
import { date, flag, int, json, num, serial, string, tableOptions, timestamps } from "./columns";
import { enumColumn } from "./enum";
import {
  ALARM_PRIORITIES,
  ALARM_STATES,
  STORED_ALARM_CONDITIONS,
  type AlarmPriority,
  type AlarmState,
  type StoredAlarmCondition,
} from "@/lib/domain/types";
import type { Loop } from "./loop";
import type { Tenant } from "./tenant";

export type PolicyScope = "tenant" | "site" | "loop";

/**
 * Stored alarm levels of one scope: a partial override whose shape and meaning belong to
 * lib/domain/alarms/policy.ts (`policyOverrideSchema` validates it before it is written).
 */
export type AlarmPolicySettings = Record<string, unknown>;

export class AlarmPolicy extends TimedRow<AlarmPolicy> {
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare scope: PolicyScope;
  /** tenants.id, sites.id or loops.id according to scope. */
  declare scopeId: number;
  declare settings: AlarmPolicySettings;
  declare updatedBy: number | null;
}

export class Alarm extends TimedRow<Alarm> {
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare loopId: ForeignKey<Loop["id"]>;
  /** An operator alarm condition, or a retired one on a row kept for history (`sluggish`, migration 0104). */
  declare condition: StoredAlarmCondition;
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
}

export class AlarmOccurrence extends Row<AlarmOccurrence> {
  declare id: CreationOptional<number>;
  declare alarmId: number;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare loopId: number;
  declare areaId: number | null;
  declare condition: StoredAlarmCondition;
  declare priority: AlarmPriority;
  declare startedAt: Date;
  declare endedAt: CreationOptional<Date | null>;
  declare acknowledgedAt: CreationOptional<Date | null>;
}

export class AlarmEvent extends Row<AlarmEvent> {
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
      id: serial(),
      tenantId: int(),
      scope: enumOf(["tenant", "site", "loop"]),
      scopeId: int(),
      settings: json(),
      updatedBy: int(true),
      ...timestamps(),
    },
    tableOptions(sequelize, "alarm_policies", "AlarmPolicy"),
  );
  Alarm.init(
    {
      id: serial(),
      tenantId: int(),
      loopId: int(),
      condition: enumOf(STORED_ALARM_CONDITIONS),
      priority: enumOf(ALARM_PRIORITIES),
      state: enumColumn(ALARM_STATES, false, "normal"),
      active: flag(false),
      shelvedUntil: date(true),
      shelvedBy: int(true),
      suppressedReason: string(500, true),
      outOfServiceReason: string(500, true),
      value: num(true),
      level: num(true),
      message: { type: DataTypes.STRING(500), allowNull: false, defaultValue: "" },
      activatedAt: date(true),
      acknowledgedAt: date(true),
      acknowledgedBy: int(true),
      changedAt: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
      version: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      shelveReason: string(1000, true),
      occurrenceOpen: flag(false),
      journalSeq: { type: DataTypes.BIGINT, allowNull: false, defaultValue: 0 },
      ...timestamps(),
    },
    tableOptions(sequelize, "alarms", "Alarm"),
  );
  AlarmOccurrence.init(
    {
      id: serial(true),
      alarmId: int(),
      tenantId: int(),
      loopId: int(),
      areaId: int(true),
      condition: enumOf(STORED_ALARM_CONDITIONS),
      priority: enumOf(ALARM_PRIORITIES),
      startedAt: date(),
      endedAt: date(true),
      acknowledgedAt: date(true),
    },
    tableOptions(sequelize, "alarm_occurrences", "AlarmOccurrence", { timestamps: false }),
  );
  AlarmEvent.init(
    {
      id: serial(true),
      tenantId: int(),
      alarmId: int(),
      loopId: int(),
      journalId: { type: DataTypes.STRING(64), allowNull: false, unique: true },
      at: date(),
      kind: string(40),
      fromState: enumOf(ALARM_STATES, true),
      toState: enumOf(ALARM_STATES, true),
      userId: int(true),
      comment: { type: DataTypes.TEXT, allowNull: true },
      data: json(true),
    },
    tableOptions(sequelize, "alarm_events", "AlarmEvent", { timestamps: false }),
  );
  return { AlarmPolicy, Alarm, AlarmOccurrence, AlarmEvent };
}
