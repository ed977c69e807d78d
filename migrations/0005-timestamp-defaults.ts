/**
 * Database-side defaults for the time columns, so rows written with raw SQL (bulk inserts,
 * journal replay) need not state them: created_at / at / changed_at default to
 * CURRENT_TIMESTAMP(3), updated_at also follows every UPDATE. The session time zone is UTC
 * (Sequelize timezone '+00:00'; the private server runs with --default-time-zone=+00:00).
 */
import { QueryTypes } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

const COLUMNS: [table: string, column: string][] = [
  ...["tenants", "sites", "areas", "users", "memberships", "invitations", "device_credentials", "loops", "alarm_policies", "alarms", "notification_rules"].flatMap(
    (t): [string, string][] => [
      [t, "created_at"],
      [t, "updated_at"],
    ],
  ),
  ["step_tests", "created_at"],
  ["config_changes", "at"],
  ["estimator_checkpoints", "updated_at"],
  ["alarms", "changed_at"],
];

async function nullable(qi: Parameters<MigrationFn>[0]["context"], table: string, column: string): Promise<boolean> {
  const rows = await qi.sequelize.query<{ n: string }>(
    "SELECT is_nullable AS n FROM information_schema.columns WHERE table_schema = DATABASE() AND table_name = ? AND column_name = ?",
    { replacements: [table, column], type: QueryTypes.SELECT },
  );
  if (!rows[0]) throw new Error(`Column ${table}.${column} not found`);
  return rows[0].n === "YES";
}

export const up: MigrationFn = async ({ context: qi }) => {
  for (const [table, column] of COLUMNS) {
    const nul = (await nullable(qi, table, column)) ? "NULL" : "NOT NULL";
    const onUpdate = column === "updated_at" ? " ON UPDATE CURRENT_TIMESTAMP(3)" : "";
    await qi.sequelize.query(`ALTER TABLE \`${table}\` MODIFY \`${column}\` DATETIME(3) ${nul} DEFAULT CURRENT_TIMESTAMP(3)${onUpdate}`);
  }
};

export const down: MigrationFn = async ({ context: qi }) => {
  for (const [table, column] of COLUMNS) {
    const nul = (await nullable(qi, table, column)) ? "NULL" : "NOT NULL";
    await qi.sequelize.query(`ALTER TABLE \`${table}\` MODIFY \`${column}\` DATETIME(3) ${nul}`);
  }
};
