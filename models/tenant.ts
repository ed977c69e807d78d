/**
 * Tenants (companies served by Rimguard), their sites (plants) and operator areas (the
 * positions that alarm-rate KPIs are counted for). Every row below a tenant carries tenantId.
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

export class Tenant extends Model<InferAttributes<Tenant>, InferCreationAttributes<Tenant>> {
  declare id: CreationOptional<number>;
  declare slug: string;
  declare name: string;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class Site extends Model<InferAttributes<Site>, InferCreationAttributes<Site>> {
  declare id: CreationOptional<number>;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare slug: string;
  declare name: string;
  /** IANA zone name for shift-aligned reports, e.g. "Europe/Berlin". */
  declare timeZone: CreationOptional<string>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

export class Area extends Model<InferAttributes<Area>, InferCreationAttributes<Area>> {
  declare id: CreationOptional<number>;
  declare tenantId: ForeignKey<Tenant["id"]>;
  declare siteId: ForeignKey<Site["id"]>;
  declare slug: string;
  declare name: string;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}

// A fresh object per attribute: Sequelize annotates attribute definitions in place.
const slug = () => ({ type: DataTypes.STRING(64), allowNull: false, validate: { is: /^[a-z0-9-]+$/ } });

export function initTenantModels(sequelize: Sequelize) {
  Tenant.init(
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      slug: slug(),
      name: { type: DataTypes.STRING(200), allowNull: false },
      createdAt: DataTypes.DATE(3),
      updatedAt: DataTypes.DATE(3),
    },
    { sequelize, tableName: "tenants", modelName: "Tenant", underscored: true },
  );
  Site.init(
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      tenantId: { type: DataTypes.INTEGER, allowNull: false },
      slug: slug(),
      name: { type: DataTypes.STRING(200), allowNull: false },
      timeZone: { type: DataTypes.STRING(64), allowNull: false, defaultValue: "UTC" },
      createdAt: DataTypes.DATE(3),
      updatedAt: DataTypes.DATE(3),
    },
    { sequelize, tableName: "sites", modelName: "Site", underscored: true },
  );
  Area.init(
    {
      id: { type: DataTypes.INTEGER, autoIncrement: true, primaryKey: true },
      tenantId: { type: DataTypes.INTEGER, allowNull: false },
      siteId: { type: DataTypes.INTEGER, allowNull: false },
      slug: slug(),
      name: { type: DataTypes.STRING(200), allowNull: false },
      createdAt: DataTypes.DATE(3),
      updatedAt: DataTypes.DATE(3),
    },
    { sequelize, tableName: "areas", modelName: "Area", underscored: true },
  );
  return { Tenant, Site, Area };
}
