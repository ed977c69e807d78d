/**
 * A loop is one PID controller and its process, identified by its tag within a site.
 * Tuning is stored as the site writes it (gain or proportional band; Ti in s, min or
 * repeats/min; Td in s or min) and converted by the tracker. Controller and estimation
 * periods are configuration: the estimation period is proposed by the product
 * (`estimationProposedS`) and changed only by an engineer (logged in config_changes).
 *
 * Also here: uploaded step tests, the configuration change log, estimator checkpoints (so a
 * restart resumes) and the latest tracker state of each loop.
 */
import { DataTypes, type CreationOptional, type ForeignKey, type Sequelize } from "sequelize";
import { Row, TimedRow } from "./base";
import { flag, int, json, num, serial, string, tableOptions, timestamps } from "./columns";
import { enumColumn } from "./enum";
import { LOOP_KINDS, TRACKER_STATES, type LoopKind, type LoopStateDto, type TrackerState } from "@/lib/domain/types";
import type { Area, Site, Tenant } from "./tenant";

import type { ControllerAction, ControllerForm } from "@/lib/domain/tuning";
export type { ControllerAction, ControllerForm } from "@/lib/domain/tuning";
export type GainKind = "gain" | "pb";
export type TiUnits = "s" | "min" | "repeats-per-min";
export type TdUnits = "s" | "min";

export class Loop extends TimedRow<Loop> {
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare siteId: ForeignKey<Site["id"]>;
  declare areaId: ForeignKey<Area["id"]> | null;
  /** Tag as the plant writes it, e.g. "FIC-101". */
  declare tag: string;
  /** MQTT topic segment: tag lower-cased, [a-z0-9-]. Unique per tenant + site. */
  declare slug: string;
  declare description: CreationOptional<string>;
  /** Weight in the worst-loops score, 1..5 (3 = normal). */
  declare criticality: CreationOptional<number>;
  declare kind: LoopKind;
  /** PV engineering units and range. */
  declare units: string;
  declare pvLo: number;
  declare pvHi: number;
  /** MV range and units (usually 0-100 %). */
  declare mvLo: CreationOptional<number>;
  declare mvHi: CreationOptional<number>;
  declare mvUnits: CreationOptional<string>;
  /** Output clamps inside the MV range (saturation detection); null = the range ends. */
  declare mvLimitLo: number | null;
  declare mvLimitHi: number | null;
  /** Seconds between telemetry samples. */
  declare telemetryPeriodS: number;
  /** The controller's execution period, seconds. */
  declare controllerPeriodS: number;
  /** reverse: MV falls when PV rises (u = Kc (SP - PV)); direct: the opposite. */
  declare action: CreationOptional<ControllerAction>;
  declare form: CreationOptional<ControllerForm>;
  declare gainKind: CreationOptional<GainKind>;
  /** Controller gain (%/% of span), or proportional band in % when gainKind = "pb". */
  declare gainValue: number;
  /** Integral time (or rate in repeats/min); null = no integral action. */
  declare tiValue: number | null;
  declare tiUnits: CreationOptional<TiUnits>;
  declare tdValue: CreationOptional<number>;
  declare tdUnits: CreationOptional<TdUnits>;
  /** Derivative filter: time constant in seconds, or alpha (Tf = alpha * Td); at most one is set. */
  declare tfS: number | null;
  declare derivativeAlpha: number | null;
  declare cascadeMasterLoopId: number | null;
  /** ARX structure: A order, number of B coefficients, delay in estimation periods (>= 1). */
  declare na: CreationOptional<number>;
  declare nb: CreationOptional<number>;
  declare nk: CreationOptional<number>;
  declare estimationPeriodS: number;
  declare estimationProposedS: number | null;
  /** Dominant closed-loop time constant when commissioned (the work list's sluggish-tuning level is a multiple of it). */
  declare baselineTimeConstantS: number | null;
  /** Dead time, s, as the engineer configured it (Harris index); null = not configured (migration 0131). */
  declare deadTimeS: CreationOptional<number | null>;
  declare enabled: CreationOptional<boolean>;
}

export class StepTest extends Row<StepTest> {
  declare id: CreationOptional<number>;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare loopId: ForeignKey<Loop["id"]>;
  declare uploadedBy: number | null;
  /** Key of the uploaded CSV in the object store. */
  declare objectKey: string;
  declare filename: string;
  /** Sample period T of the uploaded data, seconds. */
  declare periodS: number;
  declare rowCount: number;
  /** Identification result (fitArx output, poles, fit %), null while pending. */
  declare result: unknown;
  declare createdAt: CreationOptional<Date>;
}

export class ConfigChange extends Row<ConfigChange> {
  declare id: CreationOptional<number>;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare userId: number | null;
  /** "loop", "alarm_policy", "notification_rule", "device_credential", "membership", ... */
  declare entity: string;
  declare entityId: number;
  /** { field: { from, to } } */
  declare diff: Record<string, { from: unknown; to: unknown }>;
  declare reason: string | null;
  /** The site's management-of-change reference, when the change concerns a live loop. */
  declare mocReference: string | null;
  declare at: CreationOptional<Date>;
}

export class EstimatorCheckpoint extends Row<EstimatorCheckpoint> {
  declare loopId: number;
  declare tenantId: ForeignKey<Tenant["id"]>;
  /** Serialised estimator state (JSON text, owned by server/tracking). */
  declare state: string;
  declare version: CreationOptional<number>;
  declare updatedAt: CreationOptional<Date>;
}

export class LoopState extends Row<LoopState> {
  declare loopId: number;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare trackerState: TrackerState;
  declare latest: LoopStateDto;
  /** Epoch ms of `latest`. */
  declare at: number;
}

export { tuningSeconds, type TuningSeconds } from "@/lib/domain/tuning";

const positive = () => ({ ...num(), validate: { min: 1e-6 } });

export function initLoopModels(sequelize: Sequelize) {
  Loop.init(
    {
      id: serial(),
      tenantId: int(),
      siteId: int(),
      areaId: int(true),
      tag: string(64),
      slug: { type: DataTypes.STRING(64), allowNull: false, validate: { is: /^[a-z0-9-]+$/ } },
      description: { type: DataTypes.STRING(500), allowNull: false, defaultValue: "" },
      criticality: { type: DataTypes.TINYINT.UNSIGNED, allowNull: false, defaultValue: 3 },
      kind: enumColumn(LOOP_KINDS, false),
      units: string(32),
      pvLo: num(),
      pvHi: num(),
      mvLo: num(false, 0),
      mvHi: num(false, 100),
      mvUnits: { type: DataTypes.STRING(32), allowNull: false, defaultValue: "%" },
      mvLimitLo: num(true),
      mvLimitHi: num(true),
      telemetryPeriodS: positive(),
      controllerPeriodS: positive(),
      action: enumColumn(["direct", "reverse"], false, "reverse"),
      form: enumColumn(["ideal", "parallel", "series"], false, "ideal"),
      gainKind: enumColumn(["gain", "pb"], false, "gain"),
      gainValue: num(),
      tiValue: num(true),
      tiUnits: enumColumn(["s", "min", "repeats-per-min"], false, "s"),
      tdValue: num(false, 0),
      tdUnits: enumColumn(["s", "min"], false, "s"),
      tfS: num(true),
      derivativeAlpha: num(true),
      cascadeMasterLoopId: int(true),
      na: { type: DataTypes.TINYINT.UNSIGNED, allowNull: false, defaultValue: 2, validate: { min: 1, max: 10 } },
      nb: { type: DataTypes.TINYINT.UNSIGNED, allowNull: false, defaultValue: 2, validate: { min: 1, max: 10 } },
      nk: { type: DataTypes.SMALLINT.UNSIGNED, allowNull: false, defaultValue: 1, validate: { min: 1, max: 500 } },
      estimationPeriodS: positive(),
      estimationProposedS: num(true),
      baselineTimeConstantS: num(true),
      deadTimeS: num(true),
      enabled: flag(true),
      ...timestamps(),
    },
    {
      sequelize,
      tableName: "loops",
      modelName: "Loop",
      underscored: true,
      validate: {
        rangeOrdered(this: Loop) {
          if (!(this.pvHi > this.pvLo)) throw new Error("pvHi must be greater than pvLo.");
          if (this.mvHi !== undefined && this.mvLo !== undefined && !(this.mvHi > this.mvLo)) {
            throw new Error("mvHi must be greater than mvLo.");
          }
        },
        oneDerivativeFilter(this: Loop) {
          if (this.tfS != null && this.derivativeAlpha != null) {
            throw new Error("Set either tfS or derivativeAlpha, not both.");
          }
        },
      },
    },
  );
  StepTest.init(
    {
      id: serial(),
      tenantId: int(),
      loopId: int(),
      uploadedBy: int(true),
      objectKey: string(512),
      filename: string(255),
      periodS: positive(),
      rowCount: int(),
      result: json(true),
      createdAt: DataTypes.DATE(3),
    },
    tableOptions(sequelize, "step_tests", "StepTest", { updatedAt: false }),
  );
  ConfigChange.init(
    {
      id: serial(true),
      tenantId: int(),
      userId: int(true),
      entity: string(40),
      entityId: int(),
      diff: json(),
      reason: { type: DataTypes.TEXT, allowNull: true },
      mocReference: string(100, true),
      at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
    },
    tableOptions(sequelize, "config_changes", "ConfigChange", { timestamps: false }),
  );
  EstimatorCheckpoint.init(
    {
      loopId: { type: DataTypes.INTEGER, primaryKey: true },
      tenantId: int(),
      state: { type: DataTypes.TEXT("long"), allowNull: false },
      version: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 1 },
      updatedAt: DataTypes.DATE(3),
    },
    {
      sequelize,
      tableName: "estimator_checkpoints",
      modelName: "EstimatorCheckpoint",
      underscored: true,
      createdAt: false,
    },
  );
  LoopState.init(
    {
      loopId: { type: DataTypes.INTEGER, primaryKey: true },
      tenantId: int(),
      trackerState: enumColumn(TRACKER_STATES, false, "learning"),
      latest: json(),
      at: { type: DataTypes.BIGINT, allowNull: false },
    },
    tableOptions(sequelize, "loop_states", "LoopState", { timestamps: false }),
  );
  return { Loop, StepTest, ConfigChange, EstimatorCheckpoint, LoopState };
}
