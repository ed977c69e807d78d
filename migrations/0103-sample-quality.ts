/**
 * Sample quality in history and the `poor-fit` tracker state:
 * - samples_1s and samples_1m count the samples of bad and of uncertain quality in each period
 *   (`bad_n`, `uncertain_n`); such samples are in no min/mean/max, and `n` counts the good ones
 *   the statistics are made of (lib/domain/sample-quality.ts);
 * - loop_states and pole_snapshots accept the tracker state `poor-fit`.
 * Down: `poor-fit` rows become `low-excitation` (the nearest older state: figures held, not
 * trusted) before the enum shrinks; the count columns are dropped.
 */
import type { MigrationFn } from "@/lib/data/db/migrate";

const OLD_STATES = "'learning','tracking','low-excitation','stale','manual','saturated'";
const NEW_STATES = `${OLD_STATES},'poor-fit'`;

export const up: MigrationFn = async ({ context: qi }) => {
  const q = (sql: string) => qi.sequelize.query(sql);
  await q(`ALTER TABLE samples_1s
    ADD COLUMN bad_n SMALLINT UNSIGNED NOT NULL DEFAULT 0 COMMENT 'samples of bad quality (not in the statistics)',
    ADD COLUMN uncertain_n SMALLINT UNSIGNED NOT NULL DEFAULT 0 COMMENT 'samples of uncertain quality (not in the statistics)'`);
  await q(`ALTER TABLE samples_1m
    ADD COLUMN bad_n INT UNSIGNED NOT NULL DEFAULT 0 COMMENT 'samples of bad quality (not in the statistics)',
    ADD COLUMN uncertain_n INT UNSIGNED NOT NULL DEFAULT 0 COMMENT 'samples of uncertain quality (not in the statistics)'`);
  await q(`ALTER TABLE pole_snapshots MODIFY tracker_state ENUM(${NEW_STATES}) NOT NULL`);
  await q(`ALTER TABLE loop_states MODIFY tracker_state ENUM(${NEW_STATES}) NOT NULL DEFAULT 'learning'`);
};

export const down: MigrationFn = async ({ context: qi }) => {
  const q = (sql: string) => qi.sequelize.query(sql);
  await q(`UPDATE loop_states SET tracker_state = 'low-excitation' WHERE tracker_state = 'poor-fit'`);
  await q(`UPDATE pole_snapshots SET tracker_state = 'low-excitation' WHERE tracker_state = 'poor-fit'`);
  await q(`ALTER TABLE loop_states MODIFY tracker_state ENUM(${OLD_STATES}) NOT NULL DEFAULT 'learning'`);
  await q(`ALTER TABLE pole_snapshots MODIFY tracker_state ENUM(${OLD_STATES}) NOT NULL`);
  await q(`ALTER TABLE samples_1m DROP COLUMN uncertain_n, DROP COLUMN bad_n`);
  await q(`ALTER TABLE samples_1s DROP COLUMN uncertain_n, DROP COLUMN bad_n`);
};
