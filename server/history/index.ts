/**
 * The history service: aggregates validated samples and tracker estimates into the history tiers
 * and writes them in batches; keeps the daily partitions (created ahead, dropped beyond
 * retention, lib/data/db/partitions.ts). Nothing here blocks ingest: appends are synchronous and
 * bounded, writes happen on a timer.
 */
import type { Sequelize } from "sequelize";
import { maintainHistoryPartitions } from "@/lib/data/db/partitions";
import type { LoopStateDto, SampleDto } from "@/lib/domain/types";
import type { ServerContext, Service, ServiceHealth } from "@/server/context";
import { HistoryAggregator, type AggregatorOptions } from "./aggregate";
import { HistoryWriter, type HistoryWriterOptions } from "./writer";

export { HistoryAggregator } from "./aggregate";
export { HistoryWriter } from "./writer";

export interface HistoryOptions extends HistoryWriterOptions, AggregatorOptions {
  sequelize: Sequelize;
  /** Flush period (ms). */
  flushEveryMs?: number;
  /** Partition housekeeping period (ms); 0 = only at start. */
  partitionEveryMs?: number;
  /** Days of partitions prepared ahead. */
  aheadDays?: number;
}

export interface HistoryService extends Service {
  addSamples(loopId: number, samples: readonly SampleDto[]): void;
  addState(state: LoopStateDto): void;
  /** Close idle buckets and write everything queued now (tests, shutdown). */
  flushNow(opts?: { closeAll?: boolean }): Promise<void>;
  maintainPartitions(): Promise<void>;
  readonly writer: HistoryWriter;
}

export async function startHistory(ctx: ServerContext, opts: HistoryOptions): Promise<HistoryService> {
  const writer = new HistoryWriter(opts.sequelize, opts);
  const agg = new HistoryAggregator(
    { second: (r) => writer.second(r), minute: (r) => writer.minute(r), snapshot: (r) => writer.snapshot(r) },
    opts,
  );
  let partitionError: string | null = null;
  let lastMaintenance: { at: number; created: number; dropped: number } | null = null;

  const maintainPartitions = async () => {
    try {
      const r = await maintainHistoryPartitions(opts.sequelize, {
        now: ctx.clock.now(),
        aheadDays: opts.aheadDays ?? 3,
        secondRetentionH: ctx.config.HISTORY_SECOND_RETENTION_H,
        minuteRetentionD: ctx.config.HISTORY_MINUTE_RETENTION_D,
      });
      const count = (x: Record<string, string[]>) => Object.values(x).reduce((n, a) => n + a.length, 0);
      lastMaintenance = { at: ctx.clock.now(), created: count(r.created), dropped: count(r.dropped) };
      partitionError = null;
    } catch (err) {
      partitionError = err instanceof Error ? err.message : String(err);
      console.error("[history] partition maintenance failed:", partitionError);
    }
  };
  await maintainPartitions();

  const flushTimer = ctx.clock.setInterval(() => {
    agg.closeIdle(ctx.clock.now());
    void writer.flush({ now: ctx.clock.now() });
  }, opts.flushEveryMs ?? 1_000);
  const partitionTimer = (opts.partitionEveryMs ?? 3_600_000) > 0 ? ctx.clock.setInterval(() => void maintainPartitions(), opts.partitionEveryMs ?? 3_600_000) : null;

  let stopped = false;
  return {
    name: "history",
    writer,
    addSamples: (loopId, samples) => agg.addSamples(loopId, samples),
    addState(state) {
      agg.addState(state);
      writer.state(state);
    },
    async flushNow(o = {}) {
      if (o.closeAll) agg.closeAll();
      else agg.closeIdle(ctx.clock.now());
      await writer.flush({ now: ctx.clock.now(), force: true });
      // A second pass picks up rows queued while the first one ran.
      if (writer.pending() > 0) await writer.flush({ now: ctx.clock.now(), force: true });
    },
    maintainPartitions,
    health(): ServiceHealth {
      const s = writer.stats();
      const shed = s.shed.samples_1s + s.shed.samples_1m + s.shed.pole_snapshots;
      const status = stopped ? "down" : writer.errors > 0 && s.lastError && pendingHigh(s.queued) ? "critical" : shed > 0 || partitionError ? "degraded" : "ok";
      return { status, detail: { ...s, partitions: { lastMaintenance, error: partitionError } } };
    },
    async stop() {
      if (stopped) return;
      stopped = true;
      flushTimer.cancel();
      partitionTimer?.cancel();
      agg.closeAll();
      await writer.flush({ now: ctx.clock.now(), force: true });
      if (writer.pending() > 0) await writer.flush({ now: ctx.clock.now(), force: true });
    },
  };
}

function pendingHigh(q: Record<string, number>): boolean {
  return Object.values(q).some((n) => n > 10_000);
}
