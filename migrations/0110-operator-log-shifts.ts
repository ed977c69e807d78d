/**
 * The operator log and shift handovers:
 * - operator_notes: short notes on a loop, an alarm or (shift notes) an area. Append-only like
 *   alarm_events (two triggers refuse UPDATE and DELETE): a correction is a new note whose
 *   `corrects_id` names the old one. The author's name is copied in so the log reads the same
 *   after a user is removed (author_id then becomes NULL through the foreign key; InnoDB's
 *   referential actions do not fire triggers).
 * - sites.shift_starts: the local start times of the site's shifts ("06:00,14:00,22:00" when NULL).
 * - handover_confirmations: who confirmed having read the handover of which shift, once per user.
 */
import { DataTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

const ref = (table: string, onDelete: "CASCADE" | "SET NULL" | "RESTRICT", allowNull = false, bigint = false) => ({
  type: bigint ? DataTypes.BIGINT : DataTypes.INTEGER,
  allowNull,
  references: { model: table, key: "id" },
  onDelete,
  onUpdate: onDelete === "RESTRICT" ? "RESTRICT" : "CASCADE",
});
const table = { charset: "utf8mb4", collate: "utf8mb4_unicode_ci", engine: "InnoDB" };

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.createTable(
    "operator_notes",
    {
      id: { type: DataTypes.BIGINT, autoIncrement: true, primaryKey: true, allowNull: false },
      tenant_id: ref("tenants", "RESTRICT"),
      site_id: ref("sites", "RESTRICT"),
      area_id: ref("areas", "RESTRICT", true),
      loop_id: ref("loops", "RESTRICT", true),
      alarm_id: ref("alarms", "RESTRICT", true),
      kind: { type: DataTypes.ENUM("loop", "alarm", "shift"), allowNull: false },
      author_id: ref("users", "SET NULL", true),
      author_name: { type: DataTypes.STRING(200), allowNull: false },
      text: { type: DataTypes.TEXT, allowNull: false },
      corrects_id: ref("operator_notes", "RESTRICT", true, true),
      at: { type: DataTypes.DATE(3), allowNull: false },
    },
    table,
  );
  await qi.addIndex("operator_notes", ["tenant_id", "site_id", "at"], { name: "operator_notes_site_time" });
  await qi.addIndex("operator_notes", ["loop_id", "at"], { name: "operator_notes_loop_time" });
  await qi.addIndex("operator_notes", ["alarm_id", "at"], { name: "operator_notes_alarm_time" });
  await qi.sequelize.query(
    "CREATE TRIGGER operator_notes_no_update BEFORE UPDATE ON operator_notes FOR EACH ROW " +
      "SIGNAL SQLSTATE '45000' SET MESSAGE_TEXT = 'operator_notes is append-only: UPDATE refused'",
  );
  await qi.sequelize.query(
    "CREATE TRIGGER operator_notes_no_delete BEFORE DELETE ON operator_notes FOR EACH ROW " +
      "SIGNAL SQLSTATE '45000' SET MESSAGE_TEXT = 'operator_notes is append-only: DELETE refused'",
  );

  await qi.addColumn("sites", "shift_starts", { type: DataTypes.STRING(100), allowNull: true });

  await qi.createTable(
    "handover_confirmations",
    {
      id: { type: DataTypes.BIGINT, autoIncrement: true, primaryKey: true, allowNull: false },
      tenant_id: ref("tenants", "CASCADE"),
      site_id: ref("sites", "CASCADE"),
      /** Start of the shift whose handover was read (UTC). */
      shift_start: { type: DataTypes.DATE(3), allowNull: false },
      shift_end: { type: DataTypes.DATE(3), allowNull: false },
      user_id: ref("users", "CASCADE"),
      user_name: { type: DataTypes.STRING(200), allowNull: false },
      at: { type: DataTypes.DATE(3), allowNull: false },
    },
    table,
  );
  await qi.addIndex("handover_confirmations", ["site_id", "shift_start", "user_id"], { unique: true, name: "handover_confirmations_once" });
};

export const down: MigrationFn = async ({ context: qi }) => {
  await qi.dropTable("handover_confirmations");
  await qi.removeColumn("sites", "shift_starts");
  await qi.sequelize.query("DROP TRIGGER IF EXISTS operator_notes_no_update");
  await qi.sequelize.query("DROP TRIGGER IF EXISTS operator_notes_no_delete");
  await qi.dropTable("operator_notes");
};
