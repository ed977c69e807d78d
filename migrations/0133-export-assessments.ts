/**
 * Routine-data assessments of historian exports an engineer uploads on a loop's page (issue: every
 * loop gets a verdict from routine data, offline from a historian export): the file goes to the
 * object store like a step test's, the assessment (the offline command's code on the loop's stored
 * configuration) is kept here with its headline, so the loop's record holds it.
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
    "export_assessments",
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      tenant_id: ref("tenants", "CASCADE"),
      loop_id: ref("loops", "CASCADE"),
      uploaded_by: ref("users", "SET NULL", true),
      filename: { type: DataTypes.STRING(255), allowNull: false },
      object_key: { type: DataTypes.STRING(255), allowNull: false },
      row_count: { type: DataTypes.INTEGER, allowNull: false },
      span_s: { type: DataTypes.DOUBLE, allowNull: false },
      /** First and last sample time of the export as stored (epoch ms; null when the file's times are seconds from an arbitrary origin). */
      starts_at: { type: DataTypes.DATE(3), allowNull: true },
      ends_at: { type: DataTypes.DATE(3), allowNull: true },
      label: { type: DataTypes.ENUM(...LABELS), allowNull: false },
      confidence: { type: DataTypes.DOUBLE, allowNull: false },
      report: { type: DataTypes.JSON, allowNull: false },
      /** The last PV and MV of the export, at most 1,800 pairs, for the PV-against-MV plot. */
      pv_mv: { type: DataTypes.JSON, allowNull: true },
      created_at: { type: DataTypes.DATE(3), allowNull: false },
    },
    table,
  );
  await qi.addIndex("export_assessments", ["tenant_id", "loop_id", "created_at"], { name: "export_assessments_loop" });
};

export const down: MigrationFn = async ({ context: qi }) => {
  await qi.dropTable("export_assessments");
};
