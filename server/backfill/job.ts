/**
 * One historian backfill of one loop: samples streamed from a CSV, judged one by one like live
 * telemetry (counted rejections with their lines), written to history through the live batch
 * writer with an aggregator of their own (so the live loop's open buckets are never touched),
 * and replayed in time order through a tracker of the loop's configuration whose clock reads the
 * sample times, so its estimates, states and history are those live telemetry of the same samples
 * gives. At the end that tracker takes the live tracker's place (the loop starts live with a
 * trained model), with the live samples that arrived meanwhile pushed after it.
 *
 * The model is trained only when the live tracker had seen no sample at the start (a new loop) or
 * the engineer asked to replace it; otherwise the backfill writes history only. Samples older
 * than the per-second tier's retention go to the 1-minute tier only; older than the minute
 * tier's retention they are refused. Day partitions the samples need are created first.
 */
import type { Sequelize } from "sequelize";
import { ensurePastPartition } from "@/lib/data/db/past-partitions";
import { DAY_MS } from "@/lib/data/db/partitions";
import { FUTURE_SKEW_MS } from "@/lib/domain/telemetry";
import { judgeSampleQuality } from "@/lib/domain/sample-quality";
import type { LoopStateDto, SampleDto } from "@/lib/domain/types";
import type { Bus, Clock } from "../context";
import { HistoryAggregator } from "../history/aggregate";
import type { HistoryWriter } from "../history/writer";
import type { LoopRouteRow } from "../ingest/loop-source";
import type { LoopTracker } from "../tracking/loop-tracker";
import type { TrackerRegistry } from "../tracking/registry";
import type { LoopConfig } from "../tracking/types";
import { HeapGuard } from "./heap-guard";
import { readSampleCsv, type ByteSource, type SampleRejectReason } from "./sample-csv";
import type { BackfillProgress } from "@/lib/domain/backfill";
export type { BackfillProgress };
import {
  blockedSpans,
  insertBackfill,
  updateBackfill,
  type BackfillStatus,
  type BlockedSpans,
} from "@/lib/data/backfill";

export interface BackfillDeps {
  sequelize: Sequelize;
  writer: HistoryWriter;
  registry: TrackerRegistry;
  bus: Bus;
  clock: Clock;
  secondRetentionH: number;
  minuteRetentionD: number;
  /** Queue level of the writer above which the backfill waits for a flush (rows). */
  maxPending?: number;
}

export interface BackfillParams {
  route: LoopRouteRow;
  config: LoopConfig | null;
  enabled: boolean;
  userId: number | null;
  fileName: string;
  /** Declared size of the upload (progress), when known. */
  totalBytes: number | null;
  /** Train even though the live tracker has learnt already (its model is replaced). */
  replaceModel: boolean;
}

/** A clock that reads the sample being replayed, then (after `goLive`) the server's clock. */
class ReplayClock implements Clock {
  t = 0;
  private live: Clock | null = null;
  constructor(private readonly base: Clock) {}
  now(): number {
    return this.live ? this.live.now() : this.t;
  }
  goLive(): void {
    this.live = this.base;
  }
  setTimeout(fn: () => void, ms: number) {
    return this.base.setTimeout(fn, ms);
  }
  setInterval(fn: () => void, ms: number) {
    return this.base.setInterval(fn, ms);
  }
}

const MAX_LISTED = 200;
/** Live samples kept for the trained tracker while the backfill runs. */
const MAX_HELD_LIVE = 500_000;

export class BackfillJob {
  id = 0;
  private status: BackfillStatus = "running";
  private cancelled = false;
  private bytesRead = 0;
  private accepted = 0;
  private rejected = 0;
  private minuteOnly = 0;
  private readonly rejections: Partial<Record<SampleRejectReason, number>> = {};
  private readonly firstRejections: BackfillProgress["firstRejections"] = [];
  private readonly quality: Record<string, number> = {};
  private fromT: number | null = null;
  private toT: number | null = null;
  private startedMs = Date.now();
  private message: string | null = null;
  private trained = false;
  private tracker: LoopTracker | null = null;
  private replayClock: ReplayClock;
  private held: { samples: SampleDto[]; receivedAt: number }[] = [];
  private heldCount = 0;
  private liveCutoff = Infinity;

  constructor(
    private readonly deps: BackfillDeps,
    readonly params: BackfillParams,
  ) {
    this.replayClock = new ReplayClock(deps.clock);
  }

  get loopId(): number {
    return this.params.route.loopId;
  }
  get tenantId(): number {
    return this.params.route.tenantId;
  }
  get running(): boolean {
    return this.status === "running";
  }

  /** Stop at the next sample; what was written stays and its span is recorded (a re-upload merges). */
  cancel(): void {
    this.cancelled = true;
  }

  /** Live samples of the loop while the job runs: they bound the backfill and follow it into the trained tracker. */
  observeLive(samples: readonly SampleDto[], receivedAt: number): void {
    const first = samples[0];
    if (!first) return;
    this.liveCutoff = Math.min(this.liveCutoff, Math.floor(first.t / 60_000) * 60_000);
    if (!this.tracker) return;
    if (this.heldCount + samples.length > MAX_HELD_LIVE) {
      this.tracker = null;
      this.held = [];
      this.message =
        "Too much live telemetry arrived during the backfill to carry into the trained model: history written, the live model kept.";
      return;
    }
    this.held.push({ samples: [...samples], receivedAt });
    this.heldCount += samples.length;
  }

  progress(): BackfillProgress {
    const elapsedS = Math.max(1e-3, (Date.now() - this.startedMs) / 1000);
    const byteRate = this.bytesRead / elapsedS;
    const total = this.params.totalBytes;
    return {
      id: this.id,
      loopId: this.loopId,
      fileName: this.params.fileName,
      status: this.status,
      bytesRead: this.bytesRead,
      totalBytes: total,
      accepted: this.accepted,
      rejected: this.rejected,
      minuteOnly: this.minuteOnly,
      rejections: { ...this.rejections },
      firstRejections: this.firstRejections.slice(),
      quality: { ...this.quality },
      fromT: this.fromT,
      toT: this.toT,
      samplesPerS: (this.accepted + this.rejected) / elapsedS,
      etaS:
        total !== null && byteRate > 0 && this.running
          ? Math.max(0, (total - this.bytesRead) / byteRate)
          : null,
      training: this.tracker !== null,
      trained: this.trained,
      message: this.message,
    };
  }

  /** Create the job's row (its id) and decide whether it trains. */
  async open(): Promise<void> {
    const { route, config, enabled, replaceModel } = this.params;
    this.id = await insertBackfill(this.deps.sequelize, {
      tenantId: route.tenantId,
      loopId: route.loopId,
      userId: this.params.userId,
      fileName: this.params.fileName,
    });
    const live = this.deps.registry.get(route.loopId);
    const liveSeen = live ? live.current.samples : 0;
    if (config && enabled && (liveSeen === 0 || replaceModel)) {
      this.tracker = this.deps.registry.makeTracker(config, this.replayClock);
      this.tracker.setReplaying(true);
    } else
      this.message =
        !config || !enabled
          ? "The loop is disabled or its configuration cannot build a tracker: history only."
          : "The loop already learns from live telemetry: history only (choose to replace the model to train from the backfill).";
  }

  private reject(line: number, reason: SampleRejectReason, detail: string): void {
    this.rejected++;
    this.rejections[reason] = (this.rejections[reason] ?? 0) + 1;
    if (this.firstRejections.length < MAX_LISTED)
      this.firstRejections.push({ line, reason, detail });
  }

  /** Read the whole source; resolves with the final progress (never rejects for bad data). */
  async run(source: ByteSource): Promise<BackfillProgress> {
    const d = this.deps;
    const loopId = this.loopId;
    const startNow = d.clock.now();
    this.startedMs = Date.now();
    const secondCutoff = startNow - d.secondRetentionH * 3_600_000;
    const minuteCutoff = startNow - d.minuteRetentionD * DAY_MS;
    const maxT = startNow + FUTURE_SKEW_MS;
    let blocked: BlockedSpans = { spans: [], liveFrom: null };
    const agg = new HistoryAggregator({
      second: (r) => {
        if (r.t >= secondCutoff) d.writer.second(r);
      },
      minute: (r) => d.writer.minute(r),
      snapshot: (r) => d.writer.snapshot(r),
    });
    // small: rows queued for long outlive young-generation collections and pile up in old space
    const maxPending = d.maxPending ?? 5_000;
    let last = -Infinity;
    let partitionsFrom = { minute: false, second: false };
    let spanIdx = 0;
    let sinceCheck = 0;
    let lastPersist = Date.now();
    let sliceStart = performance.now();
    const heap = new HeapGuard();
    try {
      blocked = await blockedSpans(d.sequelize, loopId, this.id);
      if (blocked.liveFrom !== null) this.liveCutoff = Math.min(this.liveCutoff, blocked.liveFrom);
      this.liveCutoff = Math.min(this.liveCutoff, Math.floor(startNow / 60_000) * 60_000 + 60_000);
      const range = this.params.config
        ? {
            pvLo: this.params.config.pvLo,
            pvHi: this.params.config.pvHi,
            mvLo: this.params.config.mvLo,
            mvHi: this.params.config.mvHi,
          }
        : this.params.route.range;
      const caution = (line: number, text: string) => (this.message = `${this.message ? `${this.message} ` : ""}Line ${line}: ${text}`);
      for await (const rec of readSampleCsv(source, (n) => (this.bytesRead = n), caution)) {
        if (this.cancelled) break;
        if ("reject" in rec) {
          this.reject(rec.line, rec.reject, rec.detail);
          if (rec.reject === "bad-header") throw new BadFileError(rec.detail);
          continue;
        }
        const s = rec.sample;
        if (s.t > maxT) {
          this.reject(rec.line, "future", "a time after the upload began.");
          continue;
        }
        if (s.t <= last) {
          this.reject(
            rec.line,
            s.t === last ? "duplicate" : "out-of-order",
            "samples must be in time order, one per time.",
          );
          continue;
        }
        if (s.t < minuteCutoff) {
          this.reject(
            rec.line,
            "beyond-retention",
            `older than the ${d.minuteRetentionD}-day history retention.`,
          );
          continue;
        }
        while (spanIdx < blocked.spans.length && blocked.spans[spanIdx]!.to <= s.t) spanIdx++;
        const span = blocked.spans[spanIdx];
        if (span && s.t >= span.from) {
          this.reject(
            rec.line,
            "overlap",
            `backfill #${span.backfillId} already wrote this minute.`,
          );
          continue;
        }
        if (s.t >= this.liveCutoff) {
          this.reject(rec.line, "overlap", "live history of this loop starts at this minute.");
          continue;
        }
        last = s.t;
        if (!partitionsFrom.minute) {
          await ensurePastPartition(d.sequelize, "samples_1m", s.t, startNow);
          await ensurePastPartition(d.sequelize, "pole_snapshots", s.t, startNow);
          partitionsFrom = { ...partitionsFrom, minute: true };
        }
        if (s.t >= secondCutoff && !partitionsFrom.second) {
          await ensurePastPartition(d.sequelize, "samples_1s", s.t, startNow);
          partitionsFrom = { ...partitionsFrom, second: true };
        }
        const q = judgeSampleQuality(s, range);
        if (q.reason !== null) {
          s.quality = q.quality;
          s.qualityReason = q.reason;
          this.quality[q.reason] = (this.quality[q.reason] ?? 0) + 1;
        }
        this.accepted++;
        if (s.t < secondCutoff) this.minuteOnly++;
        this.fromT ??= s.t;
        this.toT = s.t;
        // the live pipeline's order: the tracker first (its state feeds the minute's radius), then the samples
        if (this.tracker) {
          this.replayClock.t = s.t;
          const st = this.tracker.push([s], s.t);
          if (st) agg.addState(st);
        }
        agg.addSamples(loopId, [s]);
        // Parsed records arrive as microtasks, which never let the event loop run: give live
        // telemetry its turn after at most a few ms of replay (bench:backfill measures the effect).
        if (performance.now() - sliceStart > SLICE_MS) {
          await new Promise<void>((r) => setImmediate(r));
          sliceStart = performance.now();
        }
        if (++sinceCheck >= 1000) {
          sinceCheck = 0;
          if (heap.check()) sliceStart = performance.now();
          if (d.writer.pending() > maxPending) await d.writer.flush({ now: d.clock.now() });
          if (Date.now() - lastPersist > 5_000) {
            lastPersist = Date.now();
            await this.persist();
          }
        }
      }
      agg.closeAll();
      await d.writer.flush({ now: d.clock.now(), force: true });
      if (d.writer.pending() > 0) await d.writer.flush({ now: d.clock.now(), force: true });
      this.status = this.cancelled ? "cancelled" : "done";
      if (!this.cancelled && this.tracker && this.accepted > 0) this.install(this.tracker);
      else if (this.cancelled && this.tracker)
        this.message = "Cancelled: history written so far stays; the model was not installed.";
    } catch (e) {
      agg.closeAll();
      await d.writer.flush({ now: d.clock.now(), force: true });
      this.status = "failed";
      this.message =
        e instanceof BadFileError ? e.message : `The backfill stopped: ${(e as Error).message}`;
      if (!(e instanceof BadFileError))
        console.error(`[backfill] loop ${loopId} job ${this.id} failed:`, e);
    }
    this.tracker = null;
    this.held = [];
    await this.persist().catch((e: unknown) =>
      console.error("[backfill] could not record the job:", e),
    );
    return this.progress();
  }

  /** The trained tracker takes the live one's place; the live samples held meanwhile follow it. */
  private install(tracker: LoopTracker): void {
    tracker.setReplaying(false);
    this.replayClock.goLive();
    this.deps.registry.replaceTracker(tracker);
    const lastT = tracker.current.last?.t ?? -Infinity;
    for (const h of this.held) {
      const newer = h.samples.filter((s) => s.t > lastT);
      if (newer.length) this.deps.registry.push(this.loopId, newer, h.receivedAt);
    }
    const st: LoopStateDto = tracker.checkStale(this.deps.clock.now()) ?? tracker.current;
    this.deps.bus.emit("tracker:update", st);
    this.trained = true;
  }

  private persist(): Promise<void> {
    const p = this.progress();
    return updateBackfill(this.deps.sequelize, this.id, {
      status: this.status,
      fromT: this.fromT,
      toT: this.toT,
      bytes: this.bytesRead,
      accepted: this.accepted,
      rejected: this.rejected,
      minuteOnly: this.minuteOnly,
      trained: this.trained,
      summary: {
        rejections: p.rejections,
        firstRejections: p.firstRejections.slice(0, 50),
        quality: p.quality,
        message: p.message,
      },
    });
  }
}

class BadFileError extends Error {}

/** Longest stretch of replay between two turns of the event loop (ms). */
const SLICE_MS = 5;
