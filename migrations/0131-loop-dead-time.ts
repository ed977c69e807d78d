/**
 * A loop's dead time as the engineer knows it (from a step test or the plant's documentation), s:
 * the Harris index of the routine-data assessment needs it (docs/assessment.md, "Harris index";
 * dead time is no more identifiable from routine closed-loop data than the plant). Null = not
 * configured: the live assessment then takes the dead time of the loop's latest applied step
 * test, else leaves the Harris index null with a caution.
 */
import { DataTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.addColumn("loops", "dead_time_s", { type: DataTypes.DOUBLE, allowNull: true, defaultValue: null });
};

export const down: MigrationFn = async ({ context: qi }) => {
  await qi.removeColumn("loops", "dead_time_s");
};
