/**
 * Alarm policies (tenant default, site and loop overrides), alarm points, occurrences (for alarm
 * rate KPIs), the append-only alarm event log, notification rules and the notifications sent.
 *
 * alarm_events is an audit trail: two triggers refuse every UPDATE and DELETE, for every user
 * including root. Its foreign keys are RESTRICT, so an alarm (or loop, or tenant) with a history
 * cannot be deleted by a cascade either (InnoDB cascades do not fire triggers); loops are
 * disabled instead of deleted. DROP TABLE (a migration's down) still works.
 */
import { DataTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

const PRIORITIES = ["urgent", "high", "low"];
const CONDITIONS = ["unstable", "margin", "sluggish", "rim-forecast"];
const STATES = [
  "normal",
  "unacknowledged",
  "acknowledged",
  "rtn-unacknowledged",
  "shelved",
  "suppressed-by-design",
  "out-of-service",
];
const id = { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true, allowNull: false };
const bigId = { ...id, type: DataTypes.BIGINT };
const ref = (table: string, onDelete: "CASCADE" | "SET NULL" | "RESTRICT", allowNull = false) => ({
  type: DataTypes.INTEGER,
  allowNull,
  references: { model: table, key: "id" },
  onDelete,
  onUpdate: onDelete === "RESTRICT" ? "RESTRICT" : "CASCADE",
});
const stamps = {
  created_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
  updated_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
};
const time = (allowNull: boolean) => ({ type: DataTypes.DATE(3), allowNull });
const table = { charset: "utf8mb4", collate: "utf8mb4_unicode_ci", engine: "InnoDB" };

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.createTable(
    "alarm_policies",
    {
      id,
      tenant_id: ref("tenants", "CASCADE"),
      scope: { type: DataTypes.ENUM("tenant", "site", "loop"), allowNull: false },
      /** tenants.id, sites.id or loops.id according to `scope` (never NULL, so the unique key holds). */
      scope_id: { type: DataTypes.INTEGER, allowNull: false },
      settings: { type: DataTypes.JSON, allowNull: false },
      updated_by: ref("users", "SET NULL", true),
      ...stamps,
    },
    table,
  );
  await qi.addIndex("alarm_policies", ["tenant_id", "scope", "scope_id"], { unique: true, name: "alarm_policies_scope" });

  await qi.createTable(
    "alarms",
    {
      id,
      tenant_id: ref("tenants", "CASCADE"),
      loop_id: ref("loops", "CASCADE"),
      condition: { type: DataTypes.ENUM(...CONDITIONS), allowNull: false },
      priority: { type: DataTypes.ENUM(...PRIORITIES), allowNull: false },
      state: { type: DataTypes.ENUM(...STATES), allowNull: false, defaultValue: "normal" },
      active: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      shelved_until: time(true),
      shelved_by: ref("users", "SET NULL", true),
      suppressed_reason: { type: DataTypes.STRING(500), allowNull: true },
      out_of_service_reason: { type: DataTypes.STRING(500), allowNull: true },
      value: { type: DataTypes.DOUBLE, allowNull: true },
      level: { type: DataTypes.DOUBLE, allowNull: true },
      message: { type: DataTypes.STRING(500), allowNull: false, defaultValue: "" },
      activated_at: time(true),
      acknowledged_at: time(true),
      acknowledged_by: ref("users", "SET NULL", true),
      changed_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
      /** Optimistic concurrency: bumped on every state change. */
      version: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      ...stamps,
    },
    table,
  );
  await qi.addIndex("alarms", ["loop_id", "condition"], { unique: true, name: "alarms_loop_condition" });
  await qi.addIndex("alarms", ["tenant_id", "state", "priority"], { name: "alarms_tenant_state" });

  await qi.createTable(
    "alarm_occurrences",
    {
      id: bigId,
      alarm_id: ref("alarms", "CASCADE"),
      tenant_id: ref("tenants", "CASCADE"),
      loop_id: ref("loops", "CASCADE"),
      area_id: ref("areas", "SET NULL", true),
      condition: { type: DataTypes.ENUM(...CONDITIONS), allowNull: false },
      priority: { type: DataTypes.ENUM(...PRIORITIES), allowNull: false },
      started_at: time(false),
      ended_at: time(true),
      acknowledged_at: time(true),
    },
    table,
  );
  await qi.addIndex("alarm_occurrences", ["tenant_id", "started_at"], { name: "alarm_occurrences_tenant_time" });
  await qi.addIndex("alarm_occurrences", ["tenant_id", "area_id", "started_at"], { name: "alarm_occurrences_area_time" });
  await qi.addIndex("alarm_occurrences", ["alarm_id", "started_at"], { name: "alarm_occurrences_alarm_time" });

  await qi.createTable(
    "alarm_events",
    {
      id: bigId,
      tenant_id: ref("tenants", "RESTRICT"),
      alarm_id: ref("alarms", "RESTRICT"),
      loop_id: ref("loops", "RESTRICT"),
      /** Journal entry id: unique, so replaying the journal after an outage is idempotent. */
      journal_id: { type: DataTypes.STRING(64), allowNull: false, unique: true },
      at: time(false),
      kind: { type: DataTypes.STRING(40), allowNull: false },
      from_state: { type: DataTypes.ENUM(...STATES), allowNull: true },
      to_state: { type: DataTypes.ENUM(...STATES), allowNull: true },
      user_id: ref("users", "RESTRICT", true),
      comment: { type: DataTypes.TEXT, allowNull: true },
      data: { type: DataTypes.JSON, allowNull: true },
    },
    table,
  );
  await qi.addIndex("alarm_events", ["tenant_id", "at"], { name: "alarm_events_tenant_time" });
  await qi.addIndex("alarm_events", ["alarm_id", "at"], { name: "alarm_events_alarm_time" });
  await qi.addIndex("alarm_events", ["loop_id", "at"], { name: "alarm_events_loop_time" });
  await qi.sequelize.query(
    "CREATE TRIGGER alarm_events_no_update BEFORE UPDATE ON alarm_events FOR EACH ROW " +
      "SIGNAL SQLSTATE '45000' SET MESSAGE_TEXT = 'alarm_events is append-only: UPDATE refused'",
  );
  await qi.sequelize.query(
    "CREATE TRIGGER alarm_events_no_delete BEFORE DELETE ON alarm_events FOR EACH ROW " +
      "SIGNAL SQLSTATE '45000' SET MESSAGE_TEXT = 'alarm_events is append-only: DELETE refused'",
  );

  await qi.createTable(
    "notification_rules",
    {
      id,
      tenant_id: ref("tenants", "CASCADE"),
      area_id: ref("areas", "CASCADE", true),
      name: { type: DataTypes.STRING(200), allowNull: false },
      recipients: { type: DataTypes.JSON, allowNull: false },
      min_priority: { type: DataTypes.ENUM(...PRIORITIES), allowNull: false, defaultValue: "high" },
      escalation_minutes: { type: DataTypes.INTEGER, allowNull: true },
      repeat_minutes: { type: DataTypes.INTEGER, allowNull: true },
      enabled: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: true },
      ...stamps,
    },
    table,
  );
  await qi.addIndex("notification_rules", ["tenant_id", "area_id"], { name: "notification_rules_tenant_area" });

  await qi.createTable(
    "notifications_sent",
    {
      id: bigId,
      tenant_id: ref("tenants", "CASCADE"),
      rule_id: ref("notification_rules", "SET NULL", true),
      alarm_id: ref("alarms", "SET NULL", true),
      recipient: { type: DataTypes.STRING(254), allowNull: false },
      kind: { type: DataTypes.STRING(32), allowNull: false },
      subject: { type: DataTypes.STRING(300), allowNull: false },
      status: { type: DataTypes.ENUM("sent", "failed", "rate-limited"), allowNull: false },
      /** SMTP message id (links to the development outbox). */
      message_id: { type: DataTypes.STRING(255), allowNull: true },
      error: { type: DataTypes.TEXT, allowNull: true },
      sent_at: time(false),
    },
    table,
  );
  await qi.addIndex("notifications_sent", ["tenant_id", "sent_at"], { name: "notifications_sent_tenant_time" });
  await qi.addIndex("notifications_sent", ["recipient", "sent_at"], { name: "notifications_sent_recipient_time" });
  await qi.addIndex("notifications_sent", ["alarm_id", "sent_at"], { name: "notifications_sent_alarm_time" });
};

export const down: MigrationFn = async ({ context: qi }) => {
  await qi.sequelize.query("DROP TRIGGER IF EXISTS alarm_events_no_update");
  await qi.sequelize.query("DROP TRIGGER IF EXISTS alarm_events_no_delete");
  for (const t of ["notifications_sent", "notification_rules", "alarm_events", "alarm_occurrences", "alarms", "alarm_policies"]) {
    await qi.dropTable(t);
  }
};
