/**
 * Historian backfills of a loop: who uploaded which file, the span of sample times written
 * (`from_t`..`to_t`, epoch ms), what was accepted and refused, and how it ended. The spans are
 * what a later backfill of the same loop is checked against, so overlapping samples are refused
 * rather than written twice.
 */
import { DataTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.createTable(
    "history_backfills",
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      tenant_id: { type: DataTypes.INTEGER, allowNull: false, references: { model: "tenants", key: "id" }, onDelete: "CASCADE", onUpdate: "CASCADE" },
      loop_id: { type: DataTypes.INTEGER, allowNull: false, references: { model: "loops", key: "id" }, onDelete: "CASCADE", onUpdate: "CASCADE" },
      user_id: { type: DataTypes.INTEGER, allowNull: true, references: { model: "users", key: "id" }, onDelete: "SET NULL", onUpdate: "CASCADE" },
      file_name: { type: DataTypes.STRING(255), allowNull: false },
      status: { type: DataTypes.ENUM("running", "done", "cancelled", "failed"), allowNull: false, defaultValue: "running" },
      from_t: { type: DataTypes.BIGINT, allowNull: true },
      to_t: { type: DataTypes.BIGINT, allowNull: true },
      bytes: { type: DataTypes.BIGINT, allowNull: false, defaultValue: 0 },
      accepted: { type: DataTypes.BIGINT, allowNull: false, defaultValue: 0 },
      rejected: { type: DataTypes.BIGINT, allowNull: false, defaultValue: 0 },
      minute_only: { type: DataTypes.BIGINT, allowNull: false, defaultValue: 0 },
      trained: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      summary: { type: DataTypes.TEXT, allowNull: true },
      started_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
      finished_at: { type: DataTypes.DATE(3), allowNull: true },
    },
    { charset: "utf8mb4", collate: "utf8mb4_unicode_ci", engine: "InnoDB" },
  );
  await qi.addIndex("history_backfills", ["loop_id", "from_t"], { name: "history_backfills_loop_from" });
  await qi.addIndex("history_backfills", ["tenant_id"], { name: "history_backfills_tenant" });
};

export const down: MigrationFn = async ({ context: qi }) => {
  await qi.dropTable("history_backfills");
};
