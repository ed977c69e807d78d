/** Tenants, their sites and operator areas, users, memberships, invitations, device credentials. */
import { DataTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

const ROLES = ["viewer", "operator", "engineer", "admin"];
const id = { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true, allowNull: false };
const ref = (table: string, onDelete: "CASCADE" | "SET NULL" | "RESTRICT", allowNull = false) => ({
  type: DataTypes.INTEGER,
  allowNull,
  references: { model: table, key: "id" },
  onDelete,
  onUpdate: "CASCADE",
});
const stamps = {
  created_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
  updated_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
};
const table = { charset: "utf8mb4", collate: "utf8mb4_unicode_ci", engine: "InnoDB" };

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.createTable(
    "tenants",
    {
      id,
      slug: { type: DataTypes.STRING(64), allowNull: false, unique: true },
      name: { type: DataTypes.STRING(200), allowNull: false },
      ...stamps,
    },
    table,
  );
  await qi.createTable(
    "sites",
    {
      id,
      tenant_id: ref("tenants", "CASCADE"),
      slug: { type: DataTypes.STRING(64), allowNull: false },
      name: { type: DataTypes.STRING(200), allowNull: false },
      time_zone: { type: DataTypes.STRING(64), allowNull: false, defaultValue: "UTC" },
      ...stamps,
    },
    table,
  );
  await qi.addIndex("sites", ["tenant_id", "slug"], { unique: true, name: "sites_tenant_slug" });

  await qi.createTable(
    "areas",
    {
      id,
      tenant_id: ref("tenants", "CASCADE"),
      site_id: ref("sites", "CASCADE"),
      slug: { type: DataTypes.STRING(64), allowNull: false },
      name: { type: DataTypes.STRING(200), allowNull: false },
      ...stamps,
    },
    table,
  );
  await qi.addIndex("areas", ["site_id", "slug"], { unique: true, name: "areas_site_slug" });
  await qi.addIndex("areas", ["tenant_id"], { name: "areas_tenant" });

  await qi.createTable(
    "users",
    {
      id,
      email: { type: DataTypes.STRING(254), allowNull: false, unique: true },
      name: { type: DataTypes.STRING(200), allowNull: false },
      password_hash: { type: DataTypes.STRING(100), allowNull: true },
      disabled: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      session_version: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      last_sign_in_at: { type: DataTypes.DATE(3), allowNull: true },
      ...stamps,
    },
    table,
  );

  await qi.createTable(
    "memberships",
    {
      id,
      user_id: ref("users", "CASCADE"),
      tenant_id: ref("tenants", "CASCADE"),
      role: { type: DataTypes.ENUM(...ROLES), allowNull: false },
      ...stamps,
    },
    table,
  );
  await qi.addIndex("memberships", ["user_id", "tenant_id"], { unique: true, name: "memberships_user_tenant" });
  await qi.addIndex("memberships", ["tenant_id", "role"], { name: "memberships_tenant_role" });

  await qi.createTable(
    "invitations",
    {
      id,
      tenant_id: ref("tenants", "CASCADE"),
      email: { type: DataTypes.STRING(254), allowNull: false },
      role: { type: DataTypes.ENUM(...ROLES), allowNull: false },
      token_hash: { type: DataTypes.CHAR(64), allowNull: false, unique: true },
      invited_by: ref("users", "SET NULL", true),
      expires_at: { type: DataTypes.DATE(3), allowNull: false },
      used_at: { type: DataTypes.DATE(3), allowNull: true },
      ...stamps,
    },
    table,
  );
  await qi.addIndex("invitations", ["tenant_id", "email"], { name: "invitations_tenant_email" });

  await qi.createTable(
    "device_credentials",
    {
      id,
      tenant_id: ref("tenants", "CASCADE"),
      site_id: ref("sites", "CASCADE", true),
      name: { type: DataTypes.STRING(200), allowNull: false },
      client_id: { type: DataTypes.STRING(128), allowNull: false, unique: true },
      key_id: { type: DataTypes.STRING(64), allowNull: false, unique: true },
      secret_hash: { type: DataTypes.CHAR(64), allowNull: false },
      created_by: ref("users", "SET NULL", true),
      revoked_at: { type: DataTypes.DATE(3), allowNull: true },
      last_seen_at: { type: DataTypes.DATE(3), allowNull: true },
      ...stamps,
    },
    table,
  );
  await qi.addIndex("device_credentials", ["tenant_id"], { name: "device_credentials_tenant" });
};

export const down: MigrationFn = async ({ context: qi }) => {
  for (const t of ["device_credentials", "invitations", "memberships", "users", "areas", "sites", "tenants"]) {
    await qi.dropTable(t);
  }
};
