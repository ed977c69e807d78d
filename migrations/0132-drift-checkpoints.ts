/**
 * The rim forecast's drift part of a loop's checkpoint (server/tracking/drift-checkpoint.ts,
 * docs/architecture.md §6, "Checkpoints"), apart from `estimator_checkpoints` so that a drift part
 * that cannot be read never costs the rest: a header per loop (the base image's chunk, the
 * journal's chunks, format, stamp) and the loop's content-addressed chunks (hash of the bytes,
 * base64url, case-sensitive), written only when new and deleted once no header names them.
 */
import { DataTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

const TABLE = { charset: "utf8mb4", collate: "utf8mb4_unicode_ci", engine: "InnoDB" };
const loopRef = { type: DataTypes.INTEGER, allowNull: false, references: { model: "loops", key: "id" }, onDelete: "CASCADE", onUpdate: "CASCADE" };

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.createTable(
    "drift_checkpoints",
    {
      loop_id: { ...loopRef, primaryKey: true },
      tenant_id: { type: DataTypes.INTEGER, allowNull: false, references: { model: "tenants", key: "id" }, onDelete: "CASCADE", onUpdate: "CASCADE" },
      header: { type: DataTypes.TEXT("medium"), allowNull: false },
      updated_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
    },
    TABLE,
  );
  await qi.createTable(
    "drift_checkpoint_chunks",
    {
      loop_id: { ...loopRef, primaryKey: true },
      hash: { type: DataTypes.STRING(22, true), allowNull: false, primaryKey: true },
      data: { type: DataTypes.BLOB("medium"), allowNull: false },
    },
    TABLE,
  );
};

export const down: MigrationFn = async ({ context: qi }) => {
  await qi.dropTable("drift_checkpoint_chunks");
  await qi.dropTable("drift_checkpoints");
};
