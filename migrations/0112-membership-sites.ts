/**
 * Site-scoped memberships: a membership with rows here sees only those sites' loops, alarms,
 * notes and reports (a client's staff invited into a contractor's tenant); without rows, every
 * site of the tenant, as before.
 */
import { DataTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.createTable(
    "membership_sites",
    {
      membership_id: {
        type: DataTypes.INTEGER,
        allowNull: false,
        primaryKey: true,
        references: { model: "memberships", key: "id" },
        onDelete: "CASCADE",
        onUpdate: "CASCADE",
      },
      site_id: {
        type: DataTypes.INTEGER,
        allowNull: false,
        primaryKey: true,
        references: { model: "sites", key: "id" },
        onDelete: "CASCADE",
        onUpdate: "CASCADE",
      },
    },
    { charset: "utf8mb4", collate: "utf8mb4_unicode_ci", engine: "InnoDB" },
  );
};

export const down: MigrationFn = async ({ context: qi }) => {
  await qi.dropTable("membership_sites");
};
