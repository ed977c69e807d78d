/**
 * History tiers (see migrations/0004-history.ts): `t` is BIGINT epoch milliseconds (UTC);
 * primary key (loopId, t); tables partitioned by day (lib/data/db/partitions.ts). For bulk writes use
 * one multi-row INSERT through `sequelize.query` (bulkCreate costs ~5x the CPU per row).
 * No tenantId column: rows are reached only through their loop, which the tenancy guard checks.
 */
import { DataTypes, type CreationOptional, type Model, type Sequelize } from "sequelize";
import { Row } from "./base";
import { num } from "./columns";
import { enumColumn } from "./enum";
import { TRACKER_STATES, type LoopMode, type TrackerState } from "@/lib/domain/types";


/** What both sample tiers hold: min/mean/max of SP, PV, MV over a bucket, and the sample counts. */
abstract class SampleStats<M extends Model> extends Row<M> {
  declare loopId: number;
  /** Epoch ms (UTC), start of the bucket. */
  declare t: number;
  declare spMin: number | null;
  declare spMean: number | null;
  declare spMax: number | null;
  declare pvMin: number | null;
  declare pvMean: number | null;
  declare pvMax: number | null;
  declare mvMin: number | null;
  declare mvMean: number | null;
  declare mvMax: number | null;
  /** Good samples aggregated (the statistics are made of these). */
  declare n: CreationOptional<number>;
  /** Samples of bad / uncertain quality in the bucket (in no statistic; migrations/0103). */
  declare badN: CreationOptional<number>;
  declare uncertainN: CreationOptional<number>;
}

/** Per-second min/mean/max of SP, PV, MV. */
export class Sample1s extends SampleStats<Sample1s> {
  declare mode: LoopMode | null;
}

/** 1-minute aggregates of SP, PV, MV and the spectral radius. */
export class Sample1m extends SampleStats<Sample1m> {
  declare radiusMin: number | null;
  declare radiusMean: number | null;
  declare radiusMax: number | null;
  /** Share of the minute in manual, 0..1. */
  declare manualFraction: number | null;
}

export class PoleSnapshot extends Row<PoleSnapshot> {
  declare loopId: number;
  declare t: number;
  declare radius: number | null;
  declare decayRatio: number | null;
  /** JSON text: { model: PoleDto[], data: PoleDto[] } as written by server/history. */
  declare poles: string | null;
  declare trackerState: TrackerState;
}

const key = () => ({
  loopId: { type: DataTypes.INTEGER, allowNull: false, primaryKey: true },
  t: { type: DataTypes.BIGINT, allowNull: false, primaryKey: true },
});
const mmm = <P extends string>(p: P) =>
  ({ [`${p}Min`]: num(true), [`${p}Mean`]: num(true), [`${p}Max`]: num(true) }) as Record<
    `${P}Min` | `${P}Mean` | `${P}Max`,
    ReturnType<typeof num>
  >;

/** The columns of SampleStats: key, SP/PV/MV statistics, the sample counts (their width and n's default per tier). */
const sampleStatsColumns = (count: typeof DataTypes.SMALLINT.UNSIGNED | typeof DataTypes.INTEGER.UNSIGNED, nDefault: number) => ({
  ...key(),
  ...mmm("sp"),
  ...mmm("pv"),
  ...mmm("mv"),
  n: { type: count, allowNull: false, defaultValue: nDefault },
  badN: { type: count, allowNull: false, defaultValue: 0 },
  uncertainN: { type: count, allowNull: false, defaultValue: 0 },
});

export function initHistoryModels(sequelize: Sequelize) {
  const common = { sequelize, underscored: true, timestamps: false } as const;
  Sample1s.init(
    { ...sampleStatsColumns(DataTypes.SMALLINT.UNSIGNED, 1), mode: enumColumn(["auto", "manual", "cascade"], true) },
    { ...common, tableName: "samples_1s", modelName: "Sample1s" },
  );
  Sample1m.init(
    { ...sampleStatsColumns(DataTypes.INTEGER.UNSIGNED, 0), ...mmm("radius"), manualFraction: num(true) },
    { ...common, tableName: "samples_1m", modelName: "Sample1m" },
  );
  PoleSnapshot.init(
    {
      ...key(),
      radius: num(true),
      decayRatio: num(true),
      poles: { type: DataTypes.TEXT("long"), allowNull: true },
      trackerState: enumColumn(TRACKER_STATES, false),
    },
    { ...common, tableName: "pole_snapshots", modelName: "PoleSnapshot" },
  );
  return { Sample1s, Sample1m, PoleSnapshot };
}
