/**
 * People: users (one account across tenants, bcrypt password hash, `sessionVersion` bumped to
 * force sign-out everywhere), memberships (user x tenant x role) and one-time invitations
 * (only the SHA-256 of the token is stored).
 */
import {
  DataTypes,
  Model,
  type CreationOptional,
  type ForeignKey,
  type InferAttributes,
  type InferCreationAttributes,
  type Sequelize,
} from "sequelize";
import { enumColumn } from "./enum";
import { ROLES, type Role } from "@/lib/domain/types";
import type { Tenant } from "./tenant";

export class User extends Model<InferAttributes<User>, InferCreationAttributes<User>> {
  declare id: CreationOptional<number>;
  declare email: string;
  declare name: string;
  /** bcrypt hash; null until an invited user sets a password. */
  declare passwordHash: string | null;
  declare disabled: CreationOptional<boolean>;
  declare sessionVersion: CreationOptional<number>;
  declare lastSignInAt: CreationOptional<Date | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class Membership extends Model<InferAttributes<Membership>, InferCreationAttributes<Membership>> {
  declare id: CreationOptional<number>;
  declare userId: ForeignKey<User["id"]>;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare role: Role;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class Invitation extends Model<InferAttributes<Invitation>, InferCreationAttributes<Invitation>> {
  declare id: CreationOptional<number>;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare email: string;
  declare role: Role;
  /** SHA-256 hex of the one-time token (the token itself is only in the e-mail). */
  declare tokenHash: string;
  declare invitedBy: number | null;
  declare expiresAt: Date;
  declare usedAt: CreationOptional<Date | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export function initUserModels(sequelize: Sequelize) {
  User.init(
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      email: {
        type: DataTypes.STRING(254),
        allowNull: false,
        unique: true,
        validate: { isEmail: true },
        set(v: string) {
          this.setDataValue("email", String(v).trim().toLowerCase());
        },
      },
      name: { type: DataTypes.STRING(200), allowNull: false },
      passwordHash: { type: DataTypes.STRING(100), allowNull: true },
      disabled: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false },
      sessionVersion: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      lastSignInAt: { type: DataTypes.DATE(3), allowNull: true },
      createdAt: DataTypes.DATE(3),
      updatedAt: DataTypes.DATE(3),
    },
    {
      sequelize,
      tableName: "users",
      modelName: "User",
      underscored: true,
      defaultScope: { attributes: { exclude: ["passwordHash"] } },
      // `User.scope("withPassword")` (or `unscoped()`) reads the hash; by default it is never selected.
      scopes: { withPassword: {} },
    },
  );
  Membership.init(
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      userId: { type: DataTypes.INTEGER, allowNull: false },
      tenantId: { type: DataTypes.INTEGER, allowNull: false },
      role: enumColumn(ROLES, false),
      createdAt: DataTypes.DATE(3),
      updatedAt: DataTypes.DATE(3),
    },
    { sequelize, tableName: "memberships", modelName: "Membership", underscored: true },
  );
  Invitation.init(
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      tenantId: { type: DataTypes.INTEGER, allowNull: false },
      email: { type: DataTypes.STRING(254), allowNull: false },
      role: enumColumn(ROLES, false),
      tokenHash: { type: DataTypes.CHAR(64), allowNull: false, unique: true },
      invitedBy: { type: DataTypes.INTEGER, allowNull: true },
      expiresAt: { type: DataTypes.DATE(3), allowNull: false },
      usedAt: { type: DataTypes.DATE(3), allowNull: true },
      createdAt: DataTypes.DATE(3),
      updatedAt: DataTypes.DATE(3),
    },
    { sequelize, tableName: "invitations", modelName: "Invitation", underscored: true },
  );
  return { User, Membership, Invitation };
}
