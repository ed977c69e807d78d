/**
 * Sparkplug B ingest (docs/architecture.md §5): which tenant owns which Sparkplug group ids
 * (`sparkplug_groups`, one owner per group id, so a mapping holds behind an external broker that
 * does not say which credential published), which device metrics feed which loop's SP, PV, MV and
 * mode (`sparkplug_mappings`, at most one per loop), and the last birth of every edge node and
 * device with its bdSeq (`sparkplug_births`; births are not retained and Rimguard never asks for
 * one, so they are restored from here after a restart). `device` is '' for the edge node itself.
 */
import { DataTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

const table = { charset: "utf8mb4", collate: "utf8mb4_unicode_ci", engine: "InnoDB" } as const;
const tenantRef = { type: DataTypes.INTEGER, allowNull: false, references: { model: "tenants", key: "id" }, onDelete: "CASCADE", onUpdate: "CASCADE" } as const;

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.createTable(
    "sparkplug_groups",
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      tenant_id: tenantRef,
      group_id: { type: DataTypes.STRING(64), allowNull: false, unique: "sparkplug_groups_group" },
      created_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
    },
    table,
  );
  await qi.createTable(
    "sparkplug_mappings",
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      tenant_id: tenantRef,
      loop_id: { type: DataTypes.INTEGER, allowNull: false, unique: "sparkplug_mappings_loop", references: { model: "loops", key: "id" }, onDelete: "CASCADE", onUpdate: "CASCADE" },
      group_id: { type: DataTypes.STRING(64), allowNull: false },
      edge_node: { type: DataTypes.STRING(64), allowNull: false },
      device: { type: DataTypes.STRING(64), allowNull: false, defaultValue: "" },
      sp_metric: { type: DataTypes.STRING(255), allowNull: false },
      pv_metric: { type: DataTypes.STRING(255), allowNull: false },
      mv_metric: { type: DataTypes.STRING(255), allowNull: false },
      mode_metric: { type: DataTypes.STRING(255), allowNull: true },
      updated_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
    },
    table,
  );
  await qi.addIndex("sparkplug_mappings", ["group_id", "edge_node", "device"], { name: "sparkplug_mappings_device" });
  await qi.addIndex("sparkplug_mappings", ["tenant_id"], { name: "sparkplug_mappings_tenant" });
  await qi.createTable(
    "sparkplug_births",
    {
      tenant_id: tenantRef,
      group_id: { type: DataTypes.STRING(64), allowNull: false, primaryKey: true },
      edge_node: { type: DataTypes.STRING(64), allowNull: false, primaryKey: true },
      device: { type: DataTypes.STRING(64), allowNull: false, primaryKey: true, defaultValue: "" },
      bd_seq: { type: DataTypes.BIGINT, allowNull: true },
      /** JSON: [{ name, alias, datatype, value, t }] as the birth declared them. */
      metrics: { type: DataTypes.TEXT("medium"), allowNull: false },
      born_at: { type: DataTypes.BIGINT, allowNull: false },
      dead_at: { type: DataTypes.BIGINT, allowNull: true },
      needs_rebirth: { type: DataTypes.STRING(255), allowNull: true },
    },
    table,
  );
  await qi.addIndex("sparkplug_births", ["tenant_id"], { name: "sparkplug_births_tenant" });
};

export const down: MigrationFn = async ({ context: qi }) => {
  await qi.dropTable("sparkplug_births");
  await qi.dropTable("sparkplug_mappings");
  await qi.dropTable("sparkplug_groups");
};
