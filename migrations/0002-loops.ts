/**
 * Loops (tag, range, periods, controller tuning, model structure) and what hangs off a loop:
 * uploaded step tests, the configuration change log, estimator checkpoints, latest states.
 */
import { DataTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

const LOOP_KINDS = ["flow", "level", "temperature", "pressure", "composition", "other"];
const TRACKER_STATES = ["learning", "tracking", "low-excitation", "stale", "manual", "saturated"];
const id = { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true, allowNull: false };
const ref = (table: string, onDelete: "CASCADE" | "SET NULL" | "RESTRICT", allowNull = false) => ({
  type: DataTypes.INTEGER,
  allowNull,
  references: { model: table, key: "id" },
  onDelete,
  onUpdate: "CASCADE",
});
const stamps = {
  created_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
  updated_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
};
const table = { charset: "utf8mb4", collate: "utf8mb4_unicode_ci", engine: "InnoDB" };
const num = (allowNull = false, defaultValue?: number) => ({
  type: DataTypes.DOUBLE,
  allowNull,
  ...(defaultValue === undefined ? {} : { defaultValue }),
});

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.createTable(
    "loops",
    {
      id,
      tenant_id: ref("tenants", "CASCADE"),
      site_id: ref("sites", "CASCADE"),
      area_id: ref("areas", "SET NULL", true),
      tag: { type: DataTypes.STRING(64), allowNull: false },
      slug: { type: DataTypes.STRING(64), allowNull: false },
      description: { type: DataTypes.STRING(500), allowNull: false, defaultValue: "" },
      kind: { type: DataTypes.ENUM(...LOOP_KINDS), allowNull: false },
      units: { type: DataTypes.STRING(32), allowNull: false },
      pv_lo: num(),
      pv_hi: num(),
      mv_lo: num(false, 0),
      mv_hi: num(false, 100),
      mv_units: { type: DataTypes.STRING(32), allowNull: false, defaultValue: "%" },
      mv_limit_lo: num(true),
      mv_limit_hi: num(true),
      telemetry_period_s: num(),
      controller_period_s: num(),
      action: { type: DataTypes.ENUM("direct", "reverse"), allowNull: false, defaultValue: "reverse" },
      form: { type: DataTypes.ENUM("ideal", "parallel", "series"), allowNull: false, defaultValue: "ideal" },
      gain_kind: { type: DataTypes.ENUM("gain", "pb"), allowNull: false, defaultValue: "gain" },
      gain_value: num(),
      ti_value: num(true),
      ti_units: { type: DataTypes.ENUM("s", "min", "repeats-per-min"), allowNull: false, defaultValue: "s" },
      td_value: num(false, 0),
      td_units: { type: DataTypes.ENUM("s", "min"), allowNull: false, defaultValue: "s" },
      tf_s: num(true),
      derivative_alpha: num(true),
      cascade_master_loop_id: ref("loops", "SET NULL", true),
      na: { type: DataTypes.TINYINT.UNSIGNED, allowNull: false, defaultValue: 2 },
      nb: { type: DataTypes.TINYINT.UNSIGNED, allowNull: false, defaultValue: 2 },
      nk: { type: DataTypes.SMALLINT.UNSIGNED, allowNull: false, defaultValue: 1 },
      estimation_period_s: num(),
      estimation_proposed_s: num(true),
      baseline_time_constant_s: num(true),
      enabled: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: true },
      ...stamps,
    },
    table,
  );
  await qi.addIndex("loops", ["tenant_id", "site_id", "slug"], { unique: true, name: "loops_tenant_site_slug" });
  await qi.addIndex("loops", ["tenant_id", "site_id", "tag"], { unique: true, name: "loops_tenant_site_tag" });
  await qi.addIndex("loops", ["tenant_id", "area_id"], { name: "loops_tenant_area" });

  await qi.createTable(
    "step_tests",
    {
      id,
      tenant_id: ref("tenants", "CASCADE"),
      loop_id: ref("loops", "CASCADE"),
      uploaded_by: ref("users", "SET NULL", true),
      object_key: { type: DataTypes.STRING(512), allowNull: false },
      filename: { type: DataTypes.STRING(255), allowNull: false },
      period_s: num(),
      row_count: { type: DataTypes.INTEGER, allowNull: false },
      result: { type: DataTypes.JSON, allowNull: true },
      created_at: stamps.created_at,
    },
    table,
  );
  await qi.addIndex("step_tests", ["tenant_id", "loop_id", "created_at"], { name: "step_tests_loop_time" });

  await qi.createTable(
    "config_changes",
    {
      id: { ...id, type: DataTypes.BIGINT },
      tenant_id: ref("tenants", "CASCADE"),
      user_id: ref("users", "SET NULL", true),
      entity: { type: DataTypes.STRING(40), allowNull: false },
      entity_id: { type: DataTypes.INTEGER, allowNull: false },
      diff: { type: DataTypes.JSON, allowNull: false },
      reason: { type: DataTypes.TEXT, allowNull: true },
      moc_reference: { type: DataTypes.STRING(100), allowNull: true },
      at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
    },
    table,
  );
  await qi.addIndex("config_changes", ["tenant_id", "entity", "entity_id", "at"], { name: "config_changes_entity" });
  await qi.addIndex("config_changes", ["tenant_id", "at"], { name: "config_changes_tenant_time" });

  await qi.createTable(
    "estimator_checkpoints",
    {
      loop_id: { ...ref("loops", "CASCADE"), primaryKey: true },
      tenant_id: ref("tenants", "CASCADE"),
      state: { type: DataTypes.TEXT("long"), allowNull: false },
      version: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 1 },
      updated_at: stamps.updated_at,
    },
    table,
  );

  await qi.createTable(
    "loop_states",
    {
      loop_id: { ...ref("loops", "CASCADE"), primaryKey: true },
      tenant_id: ref("tenants", "CASCADE"),
      tracker_state: { type: DataTypes.ENUM(...TRACKER_STATES), allowNull: false, defaultValue: "learning" },
      latest: { type: DataTypes.JSON, allowNull: false },
      at: { type: DataTypes.BIGINT, allowNull: false },
    },
    table,
  );
  await qi.addIndex("loop_states", ["tenant_id"], { name: "loop_states_tenant" });
};

export const down: MigrationFn = async ({ context: qi }) => {
  for (const t of ["loop_states", "estimator_checkpoints", "config_changes", "step_tests", "loops"]) {
    await qi.dropTable(t);
  }
};
