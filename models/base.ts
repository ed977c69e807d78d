/** The base classes of the models: attributes are the fields a class declares. */
import { Model, type CreationOptional, type InferAttributes, type InferCreationAttributes } from "sequelize";

/** A model whose attributes (and creation attributes) are inferred from its declared fields. */
export abstract class Row<M extends Model> extends Model<InferAttributes<M>, InferCreationAttributes<M>> {}

/** A row with a serial id and both time stamps (created, last updated). */
export abstract class TimedRow<M extends Model> extends Row<M> {
  declare id: CreationOptional<number>;
  declare createdAt: CreationOptional<Date>;
  declare updatedAt: CreationOptional<Date>;
}
