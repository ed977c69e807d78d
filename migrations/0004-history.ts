/**
 * History tiers, partitioned by day and pruned by dropping partitions (never DELETE):
 * - samples_1s: per-second min/mean/max of SP, PV, MV (kept for hours);
 * - samples_1m: 1-minute aggregates of SP, PV, MV and spectral radius (kept for months);
 * - pole_snapshots: spectral radius, decay ratio and poles at a coarser period or on change.
 *
 * `t` is BIGINT epoch milliseconds (UTC): RANGE partitioning works on it directly and rows are
 * inserted as plain numbers. The partition key must be part of every unique key, hence the
 * primary key (loop_id, t). Partitioned InnoDB tables cannot have foreign keys, so loop_id is not
 * one; every read goes through the owning loop, found with the tenancy guard first.
 * Partition `pmax` (VALUES LESS THAN MAXVALUE) catches rows beyond the prepared days so nothing is
 * lost; lib/data/db/partitions.ts splits daily partitions out of it ahead of time.
 */
import type { MigrationFn } from "@/lib/data/db/migrate";

const TRACKER_STATES = "'learning','tracking','low-excitation','stale','manual','saturated'";
const OPTIONS = "ENGINE=InnoDB DEFAULT CHARSET=utf8mb4 COLLATE=utf8mb4_unicode_ci";
const PARTITIONS = "PARTITION BY RANGE (t) (PARTITION pmax VALUES LESS THAN MAXVALUE)";
const mmm = (x: string) => `${x}_min DOUBLE NULL, ${x}_mean DOUBLE NULL, ${x}_max DOUBLE NULL`;

export const up: MigrationFn = async ({ context: qi }) => {
  const q = (sql: string) => qi.sequelize.query(sql);
  await q(`CREATE TABLE samples_1s (
    loop_id INT NOT NULL,
    t BIGINT NOT NULL COMMENT 'epoch ms, UTC, start of the second',
    ${mmm("sp")}, ${mmm("pv")}, ${mmm("mv")},
    mode ENUM('auto','manual','cascade') NULL,
    n SMALLINT UNSIGNED NOT NULL DEFAULT 1 COMMENT 'raw samples aggregated',
    PRIMARY KEY (loop_id, t)
  ) ${OPTIONS} ${PARTITIONS}`);
  await q(`CREATE TABLE samples_1m (
    loop_id INT NOT NULL,
    t BIGINT NOT NULL COMMENT 'epoch ms, UTC, start of the minute',
    ${mmm("sp")}, ${mmm("pv")}, ${mmm("mv")}, ${mmm("radius")},
    manual_fraction DOUBLE NULL COMMENT 'share of samples in manual, 0..1',
    n INT UNSIGNED NOT NULL DEFAULT 0 COMMENT 'raw samples aggregated',
    PRIMARY KEY (loop_id, t)
  ) ${OPTIONS} ${PARTITIONS}`);
  await q(`CREATE TABLE pole_snapshots (
    loop_id INT NOT NULL,
    t BIGINT NOT NULL COMMENT 'epoch ms, UTC',
    radius DOUBLE NULL,
    decay_ratio DOUBLE NULL,
    poles LONGTEXT NULL COMMENT 'JSON: model and data poles',
    tracker_state ENUM(${TRACKER_STATES}) NOT NULL,
    PRIMARY KEY (loop_id, t)
  ) ${OPTIONS} ${PARTITIONS}`);
};

export const down: MigrationFn = async ({ context: qi }) => {
  for (const t of ["pole_snapshots", "samples_1m", "samples_1s"]) await qi.dropTable(t);
};
