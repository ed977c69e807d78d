import { DataTypes } from "sequelize";

/**
 * An ENUM attribute that is also validated in the model, so a bad value is a clear
 * Sequelize ValidationError before it reaches the database (which refuses it as well, in strict mode).
 */
export function enumColumn(values: readonly string[], allowNull = false, defaultValue?: string) {
  return {
    type: DataTypes.ENUM(...values),
    allowNull,
    ...(defaultValue === undefined ? {} : { defaultValue }),
    validate: { isIn: { args: [values as string[]], msg: `must be one of: ${values.join(", ")}` } },
  };
}
