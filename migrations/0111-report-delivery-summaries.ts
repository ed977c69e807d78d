/**
 * Report delivery and the per-loop daily summary:
 * - report_subscriptions: a user asks for a report by e-mail (per shift or weekly), optionally for one site.
 * - report_runs: one row per scheduled run, unique on (kind, scope, period), claimed before anything
 *   is sent, so a run survives a restart and never goes out twice.
 * - loop_daily_summaries: one row per loop and UTC day, kept by the history service from the
 *   1-minute history and the tracker's snapshots, so reports outlive the raw-data retention.
 *   Diagnosis columns stay `undetermined`/NULL until the routine-data assessment fills them.
 * - loops.criticality: the engineer's weight of a loop in the worst-loops score (1 low .. 5 critical).
 */
import { DataTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

const ref = (table: string, onDelete: "CASCADE" | "SET NULL", allowNull = false) => ({
  type: DataTypes.INTEGER,
  allowNull,
  references: { model: table, key: "id" },
  onDelete,
  onUpdate: "CASCADE",
});
const table = { charset: "utf8mb4", collate: "utf8mb4_unicode_ci", engine: "InnoDB" };
const REPORTS = ["handover", "worst-loops", "fleet-health"];
const dbl = { type: DataTypes.DOUBLE, allowNull: true };

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.createTable(
    "report_subscriptions",
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true, allowNull: false },
      tenant_id: ref("tenants", "CASCADE"),
      user_id: ref("users", "CASCADE"),
      report: { type: DataTypes.ENUM(...REPORTS), allowNull: false },
      cadence: { type: DataTypes.ENUM("shift", "weekly"), allowNull: false },
      site_id: ref("sites", "CASCADE", true),
      area_id: ref("areas", "CASCADE", true),
      created_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: qi.sequelize.literal("CURRENT_TIMESTAMP(3)") },
    },
    table,
  );
  await qi.addIndex("report_subscriptions", ["tenant_id", "report", "cadence"], { name: "report_subscriptions_tenant" });

  await qi.createTable(
    "report_runs",
    {
      id: { type: DataTypes.BIGINT, autoIncrement: true, primaryKey: true, allowNull: false },
      tenant_id: ref("tenants", "CASCADE"),
      kind: { type: DataTypes.ENUM(...REPORTS), allowNull: false },
      /** What the run covers: "site:<id>" for a shift handover, "sub:<id>" for a subscription. */
      scope_key: { type: DataTypes.STRING(64), allowNull: false },
      period_start: { type: DataTypes.DATE(3), allowNull: false },
      period_end: { type: DataTypes.DATE(3), allowNull: false },
      status: { type: DataTypes.ENUM("claimed", "sent", "failed", "no-recipients"), allowNull: false },
      recipients: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      error: { type: DataTypes.TEXT, allowNull: true },
      claimed_at: { type: DataTypes.DATE(3), allowNull: false },
      finished_at: { type: DataTypes.DATE(3), allowNull: true },
    },
    table,
  );
  await qi.addIndex("report_runs", ["kind", "scope_key", "period_start"], { unique: true, name: "report_runs_once" });

  await qi.createTable(
    "loop_daily_summaries",
    {
      loop_id: { ...ref("loops", "CASCADE"), primaryKey: true },
      /** UTC day. */
      day: { type: DataTypes.DATEONLY, allowNull: false, primaryKey: true },
      tenant_id: ref("tenants", "CASCADE"),
      site_id: ref("sites", "CASCADE"),
      minutes: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      radius_mean: dbl,
      radius_max: dbl,
      /** Fraction of the day's minutes with the spectral radius at or above the loop's alarm radius. */
      alarm_share: dbl,
      manual_share: dbl,
      saturation_share: dbl,
      /** Share of minutes in the designed (automatic) mode: 1 - manual share. */
      service_factor: dbl,
      decay_ratio_max: dbl,
      /** Mean decay ratio over the day's tracking estimates (pole snapshots). */
      decay_ratio_mean: dbl,
      /** Share of the day's tracking estimates with the spectral radius at or beyond 1. */
      unstable_share: dbl,
      tracker_state: { type: DataTypes.STRING(20), allowNull: true },
      diagnosis_label: { type: DataTypes.STRING(32), allowNull: false, defaultValue: "undetermined" },
      diagnosis_confidence: dbl,
      oscillation_index: dbl,
      stiction_likelihood: dbl,
      harris_index: dbl,
      updated_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: qi.sequelize.literal("CURRENT_TIMESTAMP(3)") },
    },
    table,
  );
  await qi.addIndex("loop_daily_summaries", ["tenant_id", "day"], { name: "loop_daily_summaries_tenant_day" });

  await qi.addColumn("loops", "criticality", { type: DataTypes.TINYINT.UNSIGNED, allowNull: false, defaultValue: 3 });
};

export const down: MigrationFn = async ({ context: qi }) => {
  await qi.removeColumn("loops", "criticality");
  for (const t of ["loop_daily_summaries", "report_runs", "report_subscriptions"]) await qi.dropTable(t);
};
