/**
 * Sessions signed out before their expiry, so a restart does not bring a signed-out cookie back
 * (the in-memory list in lib/data/server-context.ts is only the fast path). A row can go once its
 * session would have expired anyway.
 */
import { DataTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.createTable(
    "session_revocations",
    {
      sid: { type: DataTypes.STRING(64), allowNull: false, primaryKey: true },
      user_id: {
        type: DataTypes.INTEGER,
        allowNull: true,
        references: { model: "users", key: "id" },
        onDelete: "CASCADE",
        onUpdate: "CASCADE",
      },
      expires_at: { type: DataTypes.DATE(3), allowNull: false },
      created_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
    },
    { charset: "utf8mb4", collate: "utf8mb4_unicode_ci", engine: "InnoDB" },
  );
  await qi.addIndex("session_revocations", ["expires_at"], { name: "session_revocations_expires_at" });
};

export const down: MigrationFn = async ({ context: qi }) => {
  await qi.dropTable("session_revocations");
};
