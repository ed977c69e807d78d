/**
 * Tenants (companies served by Rimguard), their sites (plants) and operator areas (the
 * positions that alarm-rate KPIs are counted for). Every row below a tenant carries tenantId.
 */
import { DataTypes, type CreationOptional, type ForeignKey, type Sequelize } from "sequelize";
import { TimedRow } from "./base";
import { int, serial, string, tableOptions, timestamps } from "./columns";

export class Tenant extends TimedRow<Tenant> {
  declare slug: string;
  declare name: string;
}

export class Site extends TimedRow<Site> {
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare slug: string;
  declare name: string;
  /** IANA zone name for shift-aligned reports, e.g. "Europe/Berlin". */
  declare timeZone: CreationOptional<string>;
}

export class Area extends TimedRow<Area> {
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare siteId: ForeignKey<Site["id"]>;
  declare slug: string;
  declare name: string;
}

// A fresh object per attribute: Sequelize annotates attribute definitions in place.
const slug = () => ({ type: DataTypes.STRING(64), allowNull: false, validate: { is: /^[a-z0-9-]+$/ } });

export function initTenantModels(sequelize: Sequelize) {
  Tenant.init(
    {
      id: serial(),
      slug: slug(),
      name: string(200),
      ...timestamps(),
    },
    tableOptions(sequelize, "tenants", "Tenant"),
  );
  Site.init(
    {
      id: serial(),
      tenantId: int(),
      slug: slug(),
      name: string(200),
      timeZone: { type: DataTypes.STRING(64), allowNull: false, defaultValue: "UTC" },
      ...timestamps(),
    },
    tableOptions(sequelize, "sites", "Site"),
  );
  Area.init(
    {
      id: serial(),
      tenantId: int(),
      siteId: int(),
      slug: slug(),
      name: string(200),
      ...timestamps(),
    },
    tableOptions(sequelize, "areas", "Area"),
  );
  return { Tenant, Site, Area };
}
