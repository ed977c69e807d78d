/**
 * All loop trackers of a server: samples in by loop id, `tracker:update` on the bus for every
 * new estimate or tracker-state change, staleness by `tick(now)` (the host calls it, or
 * `startTimer` runs it on the injectable clock), checkpoints out and back in.
 */
import type { RoutineFindings } from "@/lib/domain/assessment";
import type { LoopStateDto, SampleDto } from "@/lib/domain/types";
import type { Bus, Clock } from "../context";
import type { TrackerCheckpoint } from "./checkpoint";
import { LoopTracker, type LoopTrackerOptions } from "./loop-tracker";
import type { LoopConfig } from "./types";

export interface TrackerRegistryContext {
  bus: Bus;
  clock: Clock;
}

export interface CheckpointEntry {
  loopId: number;
  tenantId: number;
  state: TrackerCheckpoint;
}

export class TrackerRegistry {
  private readonly trackers = new Map<number, LoopTracker>();
  private readonly ctx: TrackerRegistryContext;
  private readonly options: Omit<LoopTrackerOptions, "clock">;
  /** Loops whose configuration could not build a tracker, with the reason. */
  readonly rejected = new Map<number, string>();
  /** Samples pushed for a loop the registry does not know. */
  unknownLoopSamples = 0;
  /** The live routine assessment's latest verdict per loop, kept across a relearn or a replaced tracker. */
  private readonly routines = new Map<number, RoutineFindings>();

  constructor(ctx: TrackerRegistryContext, loops: LoopConfig[], options: Omit<LoopTrackerOptions, "clock"> = {}) {
    this.ctx = ctx;
    this.options = options;
    for (const cfg of loops) this.upsertLoop(cfg);
  }

  get size(): number {
    return this.trackers.size;
  }

  /** Feed validated samples of one loop (oldest first); emits `tracker:update` when a state results. */
  push(loopId: number, samples: readonly SampleDto[], receivedAt: number): void {
    const tr = this.trackers.get(loopId);
    if (!tr) {
      this.unknownLoopSamples += samples.length;
      return;
    }
    const state = tr.push(samples, receivedAt);
    if (state) this.ctx.bus.emit("tracker:update", state);
  }

  /** A loop's source said it is gone (Sparkplug death): `stale` at once, not after 3 silent periods. */
  markSourceGone(loopId: number, reason: string): void {
    const st = this.trackers.get(loopId)?.markSourceGone(reason);
    if (st) this.ctx.bus.emit("tracker:update", st);
  }

  /** Staleness: every tracker whose state changed at `now` emits its new state. */
  tick(now: number = this.ctx.clock.now()): void {
    for (const tr of this.trackers.values()) {
      const st = tr.checkStale(now);
      if (st) this.ctx.bus.emit("tracker:update", st);
    }
  }

  /** Run `tick` every `intervalMs` on the context's clock; returns the cancel handle. */
  startTimer(intervalMs = 1000): { cancel(): void } {
    return this.ctx.clock.setInterval(() => this.tick(), intervalMs);
  }

  /**
   * The live routine assessment's verdict of a loop (server/assessment): carried in the loop's
   * assessment from now on (`routine`), and published at once with the current figures.
   */
  attachRoutine(loopId: number, routine: RoutineFindings): void {
    this.routines.set(loopId, routine);
    const tr = this.trackers.get(loopId);
    if (tr) this.ctx.bus.emit("tracker:update", tr.attachRoutine(routine));
  }

  get(loopId: number): LoopTracker | undefined {
    return this.trackers.get(loopId);
  }

  /** Latest state of every loop. */
  states(): LoopStateDto[] {
    return [...this.trackers.values()].map((t) => t.current);
  }

  /** Every tracker with its loop and tenant. */
  entries(): { loopId: number; tenantId: number; tracker: LoopTracker }[] {
    return [...this.trackers.values()].map((t) => ({ loopId: t.config.id, tenantId: t.config.tenantId, tracker: t }));
  }

  /** Serialisable estimator state of every loop. */
  checkpoint(): CheckpointEntry[] {
    return [...this.trackers.values()].map((t) => ({ loopId: t.config.id, tenantId: t.config.tenantId, state: t.checkpoint() }));
  }

  /** Resume loops from checkpoints; returns what was restored and what was refused (never throws). */
  restore(entries: readonly { loopId: number; state: unknown }[]): { restored: number[]; refused: { loopId: number; reason: string }[] } {
    const restored: number[] = [];
    const refused: { loopId: number; reason: string }[] = [];
    for (const e of entries) {
      const tr = this.trackers.get(e.loopId);
      if (!tr) {
        refused.push({ loopId: e.loopId, reason: "no such loop in the registry" });
        continue;
      }
      const r = tr.restore(e.state as TrackerCheckpoint);
      if (r.ok) restored.push(e.loopId);
      else refused.push({ loopId: e.loopId, reason: r.reason });
    }
    return { restored, refused };
  }

  /**
   * A tracker of `cfg` with the options every tracker of this registry gets (e.g. the loop's own
   * alarm level for the forecast), on `clock` (a backfill replays on the sample times).
   */
  makeTracker(cfg: LoopConfig, clock: Clock = this.ctx.clock): LoopTracker {
    return new LoopTracker(cfg, { ...this.options, clock });
  }

  /**
   * Add a loop or apply a changed configuration: a new tuning keeps the estimators (the plant
   * model does not depend on the controller); a new structure, period or range relearns.
   * A disabled loop is removed. Returns what happened.
   */
  upsertLoop(cfg: LoopConfig): "added" | "kept" | "relearn" | "removed" | "rejected" {
    if (cfg.enabled === false) {
      this.removeLoop(cfg.id);
      return "removed";
    }
    const existing = this.trackers.get(cfg.id);
    try {
      if (existing && existing.reconfigure(cfg) === "kept") {
        this.rejected.delete(cfg.id);
        return "kept";
      }
      const tr = this.makeTracker(cfg);
      const routine = this.routines.get(cfg.id);
      if (routine) tr.attachRoutine(routine);
      this.trackers.set(cfg.id, tr);
      this.rejected.delete(cfg.id);
      return existing ? "relearn" : "added";
    } catch (e) {
      this.rejected.set(cfg.id, (e as Error).message);
      return "rejected";
    }
  }

  /** Put a tracker built elsewhere (a historian backfill's, trained on past samples) in its loop's place. */
  replaceTracker(tracker: LoopTracker): void {
    const routine = this.routines.get(tracker.config.id);
    if (routine) tracker.attachRoutine(routine);
    this.trackers.set(tracker.config.id, tracker);
    this.rejected.delete(tracker.config.id);
  }

  removeLoop(loopId: number): boolean {
    this.routines.delete(loopId);
    return this.trackers.delete(loopId);
  }
}
