/**
 * The column and option blocks the tables share. Each call returns a fresh object: Sequelize
 * annotates attribute definitions in place, so one object must never serve two attributes.
 */
import { DataTypes, type ModelOptions, type Sequelize } from "sequelize";

/** Auto-increment primary key (BIGINT for the append-only logs). */
export const serial = (big = false) => ({ type: big ? DataTypes.BIGINT : DataTypes.INTEGER, autoIncrement: true, primaryKey: true });
/** An INTEGER column: counts and the ids of other rows. */
export const int = (allowNull = false) => ({ type: DataTypes.INTEGER, allowNull });
export const string = (length: number, allowNull = false) => ({ type: DataTypes.STRING(length), allowNull });
/** A time stamp with millisecond precision. */
export const date = (allowNull = false) => ({ type: DataTypes.DATE(3), allowNull });
export const json = (allowNull = false) => ({ type: DataTypes.JSON, allowNull });
export const flag = (defaultValue: boolean) => ({ type: DataTypes.BOOLEAN, allowNull: false, defaultValue });
export const num = (allowNull = false, defaultValue?: number) => ({
  type: DataTypes.DOUBLE,
  allowNull,
  ...(defaultValue === undefined ? {} : { defaultValue }),
});
/** createdAt and updatedAt, both with millisecond precision. */
export const timestamps = () => ({ createdAt: DataTypes.DATE(3), updatedAt: DataTypes.DATE(3) });

/** The options every table shares: its names and snake_case columns. */
export function tableOptions(sequelize: Sequelize, tableName: string, modelName: string, more: ModelOptions = {}) {
  return { sequelize, tableName, modelName, underscored: true, ...more };
}
