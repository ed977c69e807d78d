/**
 * Routine-data findings and the engineering work list:
 * - `loop_assessments`: the latest live assessment of each loop (diagnosis and the full report as
 *   JSON), so the work list and reports read it and a restart shows it at once;
 * - `work_items`: one open item per loop and finding label (a generated column `open_key` is the
 *   label while the item is not closed and NULL once closed, so a unique index allows any number of
 *   closed items but one open one), with the figures when it opened and the latest;
 * - `work_item_events`: the append-only history of status changes, owners and notes (triggers
 *   refuse UPDATE and DELETE);
 * - `notification_rules.kind`: `alarm` (the operator's rules) or `finding` (an engineer's rules
 *   for work-list items); a finding never reaches the alarm list or its KPIs.
 */
import { DataTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

const table = { charset: "utf8mb4", collate: "utf8mb4_unicode_ci", engine: "InnoDB" } as const;
const ref = (model: string, onDelete: "CASCADE" | "SET NULL", allowNull = false) => ({
  type: DataTypes.INTEGER,
  allowNull,
  references: { model, key: "id" },
  onDelete,
  onUpdate: "CASCADE",
});
const LABELS = ["healthy", "aggressive-tuning", "sluggish-tuning", "valve-stiction", "external-disturbance", "saturated", "sensor-fault", "manual", "undetermined"];

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.createTable(
    "loop_assessments",
    {
      loop_id: { ...ref("loops", "CASCADE"), primaryKey: true },
      tenant_id: ref("tenants", "CASCADE"),
      assessed_at: { type: DataTypes.DATE(3), allowNull: false },
      label: { type: DataTypes.ENUM(...LABELS), allowNull: false },
      confidence: { type: DataTypes.DOUBLE, allowNull: false },
      needs_s: { type: DataTypes.DOUBLE, allowNull: true },
      window_samples: { type: DataTypes.INTEGER, allowNull: false },
      window_s: { type: DataTypes.DOUBLE, allowNull: false },
      report: { type: DataTypes.JSON, allowNull: false },
    },
    table,
  );
  await qi.addIndex("loop_assessments", ["tenant_id", "label"], { name: "loop_assessments_tenant_label" });

  await qi.createTable(
    "work_items",
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      tenant_id: ref("tenants", "CASCADE"),
      site_id: ref("sites", "CASCADE"),
      loop_id: ref("loops", "CASCADE"),
      label: { type: DataTypes.ENUM(...LABELS), allowNull: false },
      status: { type: DataTypes.ENUM("open", "in-work", "closed"), allowNull: false, defaultValue: "open" },
      owner_id: ref("users", "SET NULL", true),
      confidence: { type: DataTypes.DOUBLE, allowNull: false },
      opened_at: { type: DataTypes.DATE(3), allowNull: false },
      last_seen_at: { type: DataTypes.DATE(3), allowNull: false },
      closed_at: { type: DataTypes.DATE(3), allowNull: true },
      seen_count: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 1 },
      figures_at_open: { type: DataTypes.JSON, allowNull: false },
      figures_latest: { type: DataTypes.JSON, allowNull: false },
      evidence: { type: DataTypes.JSON, allowNull: false },
      created_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
      updated_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
    },
    table,
  );
  await qi.sequelize.query(
    "ALTER TABLE work_items ADD COLUMN open_key VARCHAR(32) AS (IF(status = 'closed', NULL, label)) PERSISTENT",
  );
  await qi.addIndex("work_items", ["loop_id", "open_key"], { name: "work_items_one_open", unique: true });
  await qi.addIndex("work_items", ["tenant_id", "site_id", "status"], { name: "work_items_tenant_site_status" });

  await qi.createTable(
    "work_item_events",
    {
      id: { type: DataTypes.BIGINT, autoIncrement: true, primaryKey: true },
      tenant_id: ref("tenants", "CASCADE"),
      work_item_id: ref("work_items", "CASCADE"),
      /** null = the assessment service. */
      user_id: ref("users", "SET NULL", true),
      kind: { type: DataTypes.ENUM("opened", "status", "owner", "note", "reopened"), allowNull: false },
      from_status: { type: DataTypes.ENUM("open", "in-work", "closed"), allowNull: true },
      to_status: { type: DataTypes.ENUM("open", "in-work", "closed"), allowNull: true },
      owner_id: ref("users", "SET NULL", true),
      note: { type: DataTypes.TEXT, allowNull: true },
      at: { type: DataTypes.DATE(3), allowNull: false },
    },
    table,
  );
  await qi.addIndex("work_item_events", ["work_item_id", "at"], { name: "work_item_events_item_at" });
  // The history is append-only (foreign-key cascades do not fire triggers, so removing a tenant still works).
  await qi.sequelize.query(
    "CREATE TRIGGER work_item_events_no_update BEFORE UPDATE ON work_item_events FOR EACH ROW " +
      "SIGNAL SQLSTATE '45000' SET MESSAGE_TEXT = 'work_item_events is append-only: UPDATE refused'",
  );
  await qi.sequelize.query(
    "CREATE TRIGGER work_item_events_no_delete BEFORE DELETE ON work_item_events FOR EACH ROW " +
      "SIGNAL SQLSTATE '45000' SET MESSAGE_TEXT = 'work_item_events is append-only: DELETE refused'",
  );
  await qi.sequelize.query(
    "ALTER TABLE notification_rules ADD COLUMN kind ENUM('alarm','finding') NOT NULL DEFAULT 'alarm' AFTER name",
  );
};

export const down: MigrationFn = async ({ context: qi }) => {
  await qi.sequelize.query("DELETE FROM notification_rules WHERE kind = 'finding'");
  await qi.sequelize.query("ALTER TABLE notification_rules DROP COLUMN kind");
  await qi.sequelize.query("DROP TRIGGER IF EXISTS work_item_events_no_update");
  await qi.sequelize.query("DROP TRIGGER IF EXISTS work_item_events_no_delete");
  await qi.dropTable("work_item_events");
  await qi.dropTable("work_items");
  await qi.dropTable("loop_assessments");
};
