/**
 * Device credentials for MQTT publishers (simulators or plant gateways). A device may publish
 * only under its own tenant (and site, when siteId is set). Only an HMAC-SHA256 of the secret is
 * stored (lib/devices.ts); revoked credentials are kept for the audit trail.
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
import type { Tenant } from "./tenant";

export class DeviceCredential extends Model<InferAttributes<DeviceCredential>, InferCreationAttributes<DeviceCredential>> {
  declare id: CreationOptional<number>;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare siteId: number | null;
  declare name: string;
  /** MQTT client id the device must connect with. */
  declare clientId: string;
  /** MQTT username: a public key id. */
  declare keyId: string;
  /** HMAC-SHA256 hex of the secret (MQTT password) keyed with DEVICE_SECRET_PEPPER. */
  declare secretHash: string;
  declare createdBy: number | null;
  declare revokedAt: CreationOptional<Date | null>;
  declare lastSeenAt: CreationOptional<Date | null>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export function initDeviceModels(sequelize: Sequelize) {
  DeviceCredential.init(
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      tenantId: { type: DataTypes.INTEGER, allowNull: false },
      siteId: { type: DataTypes.INTEGER, allowNull: true },
      name: { type: DataTypes.STRING(200), allowNull: false },
      clientId: { type: DataTypes.STRING(128), allowNull: false, unique: true },
      keyId: { type: DataTypes.STRING(64), allowNull: false, unique: true },
      secretHash: { type: DataTypes.CHAR(64), allowNull: false },
      createdBy: { type: DataTypes.INTEGER, allowNull: true },
      revokedAt: { type: DataTypes.DATE(3), allowNull: true },
      lastSeenAt: { type: DataTypes.DATE(3), allowNull: true },
      createdAt: DataTypes.DATE(3),
      updatedAt: DataTypes.DATE(3),
    },
    { sequelize, tableName: "device_credentials", modelName: "DeviceCredential", underscored: true },
  );
  return { DeviceCredential };
}
