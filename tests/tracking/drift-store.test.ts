/**
 * Failures of the drift part's store (server/tracking/drift-store.ts, server/tracking/drift-chunks.ts;
 * docs/architecture.md §6, "Checkpoints"): a database that cannot list the stored chunks at start
 * costs the drift parts only, never the start or the tracker checkpoint; a write that failed part
 * way (its deletions may have run) leaves no chunk the ledger still counts on, so a later header
 * never names a chunk that is not written again. The property (a header always finds its chunks)
 * is the store's own contract; the database is a stand-in that fails on every query.
 */
import { describe, expect, it, vi } from "vitest";
import type { Sequelize } from "sequelize";
import { TrackerRegistry } from "@/server/tracking/registry";
import { DriftCheckpointStore } from "@/server/tracking/drift-store";
import { DriftChunkLedger, CHUNK_BYTES } from "@/server/tracking/drift-chunks";
import type { DriftCheckpoint } from "@/server/tracking/drift-checkpoint";
import { Bus } from "@/server/context";
import { FakeClock } from "./helpers";
import { driftRun, feed } from "./drift-checkpoint-helpers";

/** A drift part whose base holds one array of `n` numbers, every one `fill` (so each chunk's bytes, and hash, are known). */
function part(generation: number, fill: number, n = (3 * CHUNK_BYTES) / 8): DriftCheckpoint {
  return { format: 1, options: "{}", stamp: 1, generation, base: { a: new Float64Array(n).fill(fill) }, width: 8, journal: new Float64Array(0) };
}

describe("the drift store when the database fails", () => {
  it("starts without resuming any drift when the stored chunks cannot be listed, and keeps the tracker checkpoint", async () => {
    const { samples, cfg } = driftRun(1800);
    const clock = new FakeClock();
    const registry = new TrackerRegistry({ bus: new Bus(), clock }, [cfg]);
    const tracker = registry.get(cfg.id)!;
    feed(tracker, clock, samples, 0, samples.length);
    const checkpoint = JSON.stringify(tracker.checkpoint());
    const failing = { query: () => Promise.reject(new Error("connection lost")) } as unknown as Sequelize;
    const store = new DriftCheckpointStore(failing);
    const err = vi.spyOn(console, "error").mockImplementation(() => {});
    try {
      await expect(store.restore(registry, [cfg.id])).resolves.toBeUndefined();
    } finally {
      err.mockRestore();
    }
    const s = store.snapshot();
    expect(s.restoredAtStart).toBe(0);
    expect(s.error).toMatch(/could not be listed: connection lost/);
    expect(JSON.stringify(registry.get(cfg.id)!.checkpoint())).toBe(checkpoint);
  });

  it("logs a drift part that cannot be taken once per reason, and again when it fails anew after a success", () => {
    const { samples, cfg } = driftRun(900);
    const clock = new FakeClock();
    const registry = new TrackerRegistry({ bus: new Bus(), clock }, [cfg]);
    const tracker = registry.get(cfg.id)!;
    feed(tracker, clock, samples, 0, samples.length);
    const drift = tracker.drift!;
    const real = drift.checkpoint.bind(drift);
    const fails = [true, true, false, true];
    const take = vi.spyOn(drift, "checkpoint").mockImplementation(((stored: number | null, mayBase?: false) => {
      if (fails.shift()) throw new Error("cannot image a Map");
      return mayBase === false ? real(stored, false) : real(stored);
    }) as typeof drift.checkpoint);
    const err = vi.spyOn(console, "error").mockImplementation(() => {});
    try {
      const store = new DriftCheckpointStore({} as Sequelize);
      const written = [store.take(registry), store.take(registry), store.take(registry), store.take(registry)].map((w) => w.length);
      expect(written).toEqual([0, 0, 1, 0]);
      expect(err).toHaveBeenCalledTimes(2);
    } finally {
      err.mockRestore();
      take.mockRestore();
    }
  });

  it("writes a chunk again after a failed write that was to delete it, and still deletes it when unnamed", () => {
    const b = new DriftChunkLedger().plan(1, 1, part(1, 2));
    const bChunks = b.put.map((p) => p.hash);
    // chunks of base B are stored (found at start); a write of base A, which drops them, fails
    const ledger = new DriftChunkLedger();
    ledger.know(1, bChunks);
    const a = ledger.plan(1, 1, part(2, 3));
    expect(a.drop).toEqual(expect.arrayContaining(bChunks));
    ledger.failed(a);
    // base B again: its chunks may have been deleted by the failed write, so they are sent again
    const again = ledger.plan(1, 1, part(3, 2));
    expect(again.put.map((p) => p.hash)).toEqual(expect.arrayContaining(bChunks));
    // base A instead: B's chunks are still deleted
    const other = ledger.plan(1, 1, part(4, 3));
    expect(other.drop).toEqual(expect.arrayContaining(bChunks));
  });
});
