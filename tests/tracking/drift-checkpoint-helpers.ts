/**
 * For the drift checkpoint tests and the size measurement (tests/bench/drift-checkpoint-size.bench.ts):
 * the seeded drift run they share, and a drift checkpoint store in memory (the chunk table as a
 * Map: what lib/data/drift-checkpoints.ts does with SQL, the same ledger deciding what is written).
 */
import { DriftChunkLedger, decodeDrift, writeBytes } from "@/server/tracking/drift-chunks";
import type { DriftCheckpoint } from "@/server/tracking/drift-checkpoint";
import type { LoopTracker } from "@/server/tracking/loop-tracker";
import type { SampleDto } from "@/lib/domain/types";
import { testLoopConfig } from "@/tests/helpers/loop-config";
import { makeSim } from "../control/forecast-tracker-mc";
import { FakeClock, arxStructureFor } from "./helpers";

/** The rim-forecast harness's drift (radius 0.90 -> 1.0 over 10 h, seed 9100, 5 s samples) to `endS`, and a loop configuration for it. */
export function driftRun(endS: number, loop: { id?: number; tenantId?: number } = {}) {
  const sim = makeSim("linear-radius", 9100);
  const t0 = new FakeClock().t;
  const samples: SampleDto[] = [];
  while (sim.simTimeS <= endS) {
    const s = sim.step();
    if (s) samples.push({ t: t0 + s.simTimeS * 1000, sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode });
  }
  const c = sim.config;
  const cfg = testLoopConfig({ id: 1, ...loop, tag: c.tag, telemetryPeriodS: 5, controllerPeriodS: 5, estimationPeriodS: 5, controller: c.controller, ...arxStructureFor(c.plant, 5) });
  return { samples, cfg, t0 };
}

/** Push samples[from..to) into `tr` on `clock`, calling `everyMinute` at each new minute of telemetry. */
export function feed(tr: LoopTracker, clock: FakeClock, samples: readonly SampleDto[], from: number, to: number, everyMinute?: () => void): void {
  let next = Math.ceil(samples[from]!.t / 60_000) * 60_000;
  for (let i = from; i < to; i++) {
    const s = samples[i]!;
    clock.t = s.t;
    tr.push([s], s.t);
    if (everyMinute && s.t >= next) {
      everyMinute();
      next += 60_000;
    }
  }
}

/** The tracker's drift state as an image but the solver's scratch (`work`, written by each forecast); takes a new base, which changes nothing in the drift. */
export function driftState(tr: LoopTracker) {
  const im = tr.drift!.checkpoint(null).base!;
  return { ...im, fit: { ...(im.fit as object), work: null } };
}

export class MemoryDriftStore {
  readonly chunks = new Map<string, Buffer>();
  header: string | null = null;
  readonly ledger = new DriftChunkLedger();
  /** Bytes sent by every save so far (header and new chunks), and the saves. */
  bytesWritten = 0;
  saves = 0;

  constructor(readonly loopId = 1) {}

  /** Store `tracker`'s drift part now (right after its main checkpoint). */
  save(tracker: LoopTracker): void {
    const cp = tracker.drift!.checkpoint(this.ledger.generation(this.loopId));
    const w = this.ledger.plan(this.loopId, 1, cp);
    for (const p of w.put) this.chunks.set(p.hash, p.data);
    for (const h of w.drop) this.chunks.delete(h);
    this.header = w.header;
    this.ledger.committed(w);
    this.bytesWritten += writeBytes(w);
    this.saves++;
  }

  /** Bytes stored: the header and every chunk. */
  get size(): number {
    let n = this.header ? Buffer.byteLength(this.header) : 0;
    for (const c of this.chunks.values()) n += c.length;
    return n;
  }

  load(): DriftCheckpoint {
    return decodeDrift(this.header!, this.chunks);
  }
}
