/**
 * Device credentials for MQTT publishers (simulators or plant gateways). A device may publish
 * only under its own tenant (and site, when siteId is set). Only an HMAC-SHA256 of the secret is
 * stored (lib/devices.ts); revoked credentials are kept for the audit trail.
 */
import { DataTypes, type CreationOptional, type ForeignKey, type Sequelize } from "sequelize";
import { TimedRow } from "./base";
import { date, int, serial, string, tableOptions, timestamps } from "./columns";
import type { Tenant } from "./tenant";

export class DeviceCredential extends TimedRow<DeviceCredential> {
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
}

export function initDeviceModels(sequelize: Sequelize) {
  DeviceCredential.init(
    {
      id: serial(),
      tenantId: int(),
      siteId: int(true),
      name: string(200),
      clientId: { type: DataTypes.STRING(128), allowNull: false, unique: true },
      keyId: { type: DataTypes.STRING(64), allowNull: false, unique: true },
      secretHash: { type: DataTypes.CHAR(64), allowNull: false },
      createdBy: int(true),
      revokedAt: date(true),
      lastSeenAt: date(true),
      ...timestamps(),
    },
    tableOptions(sequelize, "device_credentials", "DeviceCredential"),
  );
  return { DeviceCredential };
}
