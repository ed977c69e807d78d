/**
 * Runs a fleet of simulated loops against a clock: on every tick each loop is stepped up to the
 * simulated time that corresponds to the wall time (times the speed-up factor), its samples are
 * stamped with wall-clock epoch ms (strictly increasing per loop, never ahead of the clock), and
 * batches of up to `batchSize` samples per message go to `publish` (docs/architecture.md §5: one object
 * or an array of at most 500). A lane's first message is shorter (1 + lane index mod batchSize) so
 * that the lanes' messages do not all leave in the same tick.
 *
 * Load-mode economy: a lane keeps its pending samples as numbers in one preallocated Float64Array
 * (no object per sample) and writes the message text itself, key for key what JSON.stringify of
 * `{ t, sp, pv, mv, mode }` gives (a finite number prints as String(n) in both; a non-finite one
 * as null); tested against JSON.stringify.
 */
import type { LoopMode } from "@/lib/domain/types";
import { MAX_SAMPLES_PER_MESSAGE, telemetryTopic } from "@/lib/domain/telemetry";
import type { LoopSim } from "./loop-sim";

export interface RunnerClock {
  now(): number;
}

export interface RunnerOptions {
  sims: LoopSim[];
  /** Send one message; may return a promise (its rejection is counted, not thrown). */
  publish: (topic: string, payload: string) => void | Promise<void>;
  clock?: RunnerClock;
  /** Simulated seconds per wall second (>= 1 runs faster than real time). */
  speedup?: number;
  /** Samples per message, 1..500; 1 sends a bare object. */
  batchSize?: number;
  /** Longest a sample waits in a partial batch, wall ms. */
  maxBatchDelayMs?: number;
  /**
   * "simulated" (default): each sample carries the wall time its simulated instant maps to.
   * "publish": samples carry the wall time they are handed to MQTT (load runs: the latency
   * measured downstream then starts at the publish, not at a simulator that fell behind); in a
   * batch of n the last carries the publish ms and the others 1 ms apart before it.
   */
  stamp?: "simulated" | "publish";
}

interface Lane {
  sim: LoopSim;
  topic: string;
  /** Pending samples, 4 numbers each: t, sp, pv, mv. */
  values: Float64Array;
  modes: LoopMode[];
  count: number;
  /** Samples in the lane's next message: batchSize, except the first (staggered phase). */
  limit: number;
  firstPendingAt: number;
  lastT: number;
  lastPublishedT: number;
}

export class SimulatorRunner {
  readonly speedup: number;
  readonly batchSize: number;
  readonly maxBatchDelayMs: number;
  readonly stamp: "simulated" | "publish";
  /** Largest delay between a sample's simulated wall time and its production (simulator falling behind), ms. */
  maxLagMs = 0;
  private readonly lanes: Lane[];
  private readonly publishFn: RunnerOptions["publish"];
  private readonly clock: RunnerClock;
  private startWall: number | null = null;
  private simOffsetS = 0;
  messages = 0;
  samples = 0;
  publishErrors = 0;
  /** Samples not sent because their timestamp would run too far ahead of the clock. */
  dropped = 0;
  lastError: string | null = null;

  constructor(options: RunnerOptions) {
    const batchSize = options.batchSize ?? 1;
    if (!Number.isInteger(batchSize) || batchSize < 1 || batchSize > MAX_SAMPLES_PER_MESSAGE) {
      throw new RangeError(`batchSize must be an integer in 1..${MAX_SAMPLES_PER_MESSAGE}, got ${batchSize}`);
    }
    const speedup = options.speedup ?? 1;
    if (!(speedup > 0) || !Number.isFinite(speedup)) throw new RangeError(`speedup must be a finite number > 0, got ${speedup}`);
    this.speedup = speedup;
    this.batchSize = batchSize;
    this.maxBatchDelayMs = options.maxBatchDelayMs ?? 250;
    this.stamp = options.stamp ?? "simulated";
    this.publishFn = options.publish;
    this.clock = options.clock ?? { now: () => Date.now() };
    // Lanes in step would all fill their batches in the same tick and send them in one burst
    // (5000 loops x batch 10: 5000 messages at once every second). The first message of lane i
    // carries 1 + (i mod batchSize) samples, which spreads the flushes evenly over a batch period.
    this.lanes = options.sims.map((sim, i) => ({
      sim,
      topic: telemetryTopic({ tenantSlug: sim.config.tenantSlug, siteSlug: sim.config.siteSlug, loopSlug: sim.slug }),
      values: new Float64Array(4 * batchSize),
      modes: new Array<LoopMode>(batchSize).fill("auto"),
      count: 0,
      limit: 1 + (i % batchSize),
      firstPendingAt: 0,
      lastT: 0,
      lastPublishedT: 0,
    }));
  }

  get loops(): number {
    return this.lanes.length;
  }

  /** Step every loop up to the current wall time and publish the batches that are due. */
  tick(): void {
    const now = this.clock.now();
    if (this.startWall === null) {
      this.startWall = now;
      this.simOffsetS = Math.max(0, ...this.lanes.map((l) => l.sim.simTimeS));
    }
    const targetS = this.simOffsetS + ((now - this.startWall) / 1000) * this.speedup;
    const buf: ReturnType<LoopSim["samples"]> = [];
    for (const lane of this.lanes) {
      buf.length = 0;
      lane.sim.advanceTo(targetS, buf);
      for (const s of buf) {
        let t = Math.floor(this.startWall + ((s.simTimeS - this.simOffsetS) * 1000) / this.speedup);
        if (now - t > this.maxLagMs) this.maxLagMs = now - t;
        if (this.stamp === "publish") t = now;
        if (t <= lane.lastT) t = lane.lastT + 1;
        if (t > now + 4_000) {
          // more than 1000 samples/s of one loop outran the ms clock by the skew allowance (§5): drop, counted
          this.dropped++;
          continue;
        }
        lane.lastT = t;
        if (lane.count === 0) lane.firstPendingAt = now;
        const o = 4 * lane.count;
        lane.values[o] = t;
        lane.values[o + 1] = s.sp;
        lane.values[o + 2] = s.pv;
        lane.values[o + 3] = s.mv;
        lane.modes[lane.count] = s.mode;
        lane.count++;
        if (lane.count >= lane.limit) this.flushLane(lane);
      }
      if (lane.count > 0 && now - lane.firstPendingAt >= this.maxBatchDelayMs) this.flushLane(lane);
    }
  }

  /** Publish every partial batch now. */
  flush(): void {
    for (const lane of this.lanes) if (lane.count > 0) this.flushLane(lane);
  }

  private flushLane(lane: Lane): void {
    const n = lane.count;
    lane.count = 0;
    lane.limit = this.batchSize;
    const v = lane.values;
    if (this.stamp === "publish") {
      // restamp at the hand-over to MQTT: the last sample carries the publish instant and the
      // earlier ones 1 ms apart before it (strictly increasing per loop, never after the publish,
      // so a latency measured from t is at most n - 1 ms long, never short)
      const now = this.clock.now();
      let t = Math.max(now - (n - 1), lane.lastPublishedT + 1);
      for (let i = 0; i < n; i++, t++) v[4 * i] = t;
      lane.lastT = Math.max(lane.lastT, t - 1);
      lane.lastPublishedT = t - 1;
    }
    let payload = this.batchSize === 1 && n === 1 ? "" : "[";
    for (let i = 0; i < n; i++) {
      const o = 4 * i;
      payload += (i === 0 ? '{"t":' : ',{"t":') + num(v[o]!) + ',"sp":' + num(v[o + 1]!) + ',"pv":' + num(v[o + 2]!) + ',"mv":' + num(v[o + 3]!) + ',"mode":' + modeJson(lane.modes[i]!) + "}";
    }
    if (!(this.batchSize === 1 && n === 1)) payload += "]";
    this.messages++;
    this.samples += n;
    try {
      const r = this.publishFn(lane.topic, payload);
      if (r && typeof (r as Promise<void>).catch === "function") {
        (r as Promise<void>).catch((e: unknown) => {
          this.publishErrors++;
          this.lastError = (e as Error).message;
        });
      }
    } catch (e) {
      this.publishErrors++;
      this.lastError = (e as Error).message;
    }
  }
}

/** A number as JSON.stringify writes it (non-finite -> null). */
function num(x: number): string {
  return Number.isFinite(x) ? String(x) : "null";
}

const modeText = new Map<string, string>();
/** A mode string as JSON (quoted, escaped), cached per value. */
function modeJson(mode: LoopMode): string {
  let t = modeText.get(mode);
  if (t === undefined) {
    t = JSON.stringify(mode);
    modeText.set(mode, t);
  }
  return t;
}
