/**
 * People: users (one account across tenants, bcrypt password hash, `sessionVersion` bumped to
 * force sign-out everywhere), memberships (user x tenant x role) and one-time invitations
 * (only the SHA-256 of the token is stored).
 */
import { DataTypes, type CreationOptional, type ForeignKey, type Sequelize } from "sequelize";
import { TimedRow } from "./base";
import { date, flag, int, serial, string, tableOptions, timestamps } from "./columns";
import { enumColumn } from "./enum";
import { ROLES, type Role } from "@/lib/domain/types";
import type { Tenant } from "./tenant";

export class User extends TimedRow<User> {
  declare email: string;
  declare name: string;
  /** bcrypt hash; null until an invited user sets a password. */
  declare passwordHash: string | null;
  declare disabled: CreationOptional<boolean>;
  declare sessionVersion: CreationOptional<number>;
  declare lastSignInAt: CreationOptional<Date | null>;
}

export class Membership extends TimedRow<Membership> {
  declare userId: ForeignKey<User["id"]>;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare role: Role;
}

export class Invitation extends TimedRow<Invitation> {
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare email: string;
  declare role: Role;
  /** SHA-256 hex of the one-time token (the token itself is only in the e-mail). */
  declare tokenHash: string;
  declare invitedBy: number | null;
  declare expiresAt: Date;
  declare usedAt: CreationOptional<Date | null>;
}

export function initUserModels(sequelize: Sequelize) {
  User.init(
    {
      id: serial(),
      email: {
        type: DataTypes.STRING(254),
        allowNull: false,
        unique: true,
        validate: { isEmail: true },
        set(v: string) {
          this.setDataValue("email", String(v).trim().toLowerCase());
        },
      },
      name: string(200),
      passwordHash: string(100, true),
      disabled: flag(false),
      sessionVersion: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
      lastSignInAt: date(true),
      ...timestamps(),
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
      id: serial(),
      userId: int(),
      tenantId: int(),
      role: enumColumn(ROLES, false),
      ...timestamps(),
    },
    tableOptions(sequelize, "memberships", "Membership"),
  );
  Invitation.init(
    {
      id: serial(),
      tenantId: int(),
      email: string(254),
      role: enumColumn(ROLES, false),
      tokenHash: { type: DataTypes.CHAR(64), allowNull: false, unique: true },
      invitedBy: int(true),
      expiresAt: date(),
      usedAt: date(true),
      ...timestamps(),
    },
    tableOptions(sequelize, "invitations", "Invitation"),
  );
  return { User, Membership, Invitation };
}
