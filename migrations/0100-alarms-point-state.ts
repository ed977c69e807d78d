/**
 * Alarm points keep everything needed to come back after a restart in their state: the shelve
 * reason, whether an occurrence is open, and the journal sequence of the last transition written
 * (so replaying the alarm journal into MariaDB is idempotent and never moves a point backwards).
 */
import { DataTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.addColumn("alarms", "shelve_reason", { type: DataTypes.STRING(1000), allowNull: true });
  await qi.addColumn("alarms", "occurrence_open", { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: false });
  await qi.addColumn("alarms", "journal_seq", { type: DataTypes.BIGINT, allowNull: false, defaultValue: 0 });
};

export const down: MigrationFn = async ({ context: qi }) => {
  await qi.removeColumn("alarms", "journal_seq");
  await qi.removeColumn("alarms", "occurrence_open");
  await qi.removeColumn("alarms", "shelve_reason");
};
