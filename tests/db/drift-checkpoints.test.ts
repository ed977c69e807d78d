/**
 * The drift part of the checkpoints in MariaDB (lib/data/drift-checkpoints.ts through
 * server/tracking/drift-store.ts; docs/architecture.md §6, "Checkpoints"): written each minute with
 * the tracker checkpoints, it resumes a new registry's tracker to the very drift state of the one
 * that wrote it; chunks no header names are deleted; a corrupt chunk or a header of another
 * format drops the drift part with a reason while the tracker checkpoint is restored. The
 * reference is the writing tracker itself (a restart must change nothing).
 */
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import { QueryTypes } from "sequelize";
import { createTestDatabase, type TestDatabase } from "@/tests/setup/db";
import { loadCheckpoints, saveCheckpoints } from "@/lib/data/checkpoints";
import { TrackerRegistry } from "@/server/tracking/registry";
import { DriftCheckpointStore } from "@/server/tracking/drift-store";
import { headerRefs } from "@/server/tracking/drift-chunks";
import { Bus } from "@/server/context";
import { FakeClock } from "@/tests/tracking/helpers";
import { testLoopRow } from "@/tests/helpers/loop-row";
import { driftRun, driftState, feed } from "@/tests/tracking/drift-checkpoint-helpers";

describe("drift checkpoints in MariaDB", () => {
  let db: TestDatabase;
  let run: ReturnType<typeof driftRun>;
  beforeAll(async () => {
    db = await createTestDatabase("drift");
    const tenant = await db.models.Tenant.create({ slug: "drift-co", name: "Drift Co" });
    const site = await db.models.Site.create({ tenantId: tenant.id, slug: "east", name: "East Works" });
    const loop = await db.models.Loop.create(testLoopRow({ tenantId: tenant.id, siteId: site.id, areaId: null }));
    run = driftRun(3.5 * 3600, { id: loop.id, tenantId: tenant.id });
  }, 120_000);
  afterAll(async () => {
    await db?.drop();
  });

  const storedPart = async () => {
    const [head] = await db.sequelize.query<{ header: string }>("SELECT header FROM drift_checkpoints", { type: QueryTypes.SELECT });
    const rows = await db.sequelize.query<{ hash: string; data: Buffer }>("SELECT hash, data FROM drift_checkpoint_chunks", { type: QueryTypes.SELECT });
    return { header: head!.header, chunks: new Map(rows.map((r) => [String(r.hash), r.data])) };
  };

  /** A registry and drift store resumed from what is stored, as the pipeline starts. */
  async function resume(clock: FakeClock) {
    const registry = new TrackerRegistry({ bus: new Bus(), clock }, [run.cfg]);
    const { entries } = await loadCheckpoints(db.sequelize);
    const restored = registry.restore(entries);
    const store = new DriftCheckpointStore(db.sequelize);
    await store.restore(registry, restored.restored);
    return { registry, restored, store, tracker: registry.get(run.cfg.id)! };
  }

  it("resumes the drift exactly, and keeps only the chunks its header names", async () => {
    const clock = new FakeClock();
    const registry = new TrackerRegistry({ bus: new Bus(), clock }, [run.cfg]);
    const tracker = registry.get(run.cfg.id)!;
    const store = new DriftCheckpointStore(db.sequelize);
    const write = async () => {
      const states = registry.checkpoint();
      const drift = store.take(registry);
      await saveCheckpoints(db.sequelize, states, clock.now());
      await store.save(drift, clock.now());
    };
    const lastHour = run.samples.findIndex((s) => s.t > run.t0 + 2.5 * 3600 * 1000);
    feed(tracker, clock, run.samples, 0, lastHour);
    // a checkpoint every minute of telemetry for the last hour, one after another as the pipeline writes them
    for (let i = lastHour; i < run.samples.length; ) {
      const end = run.samples.findIndex((s, k) => k > i && s.t >= run.samples[i]!.t + 60_000);
      const to = end < 0 ? run.samples.length : end;
      feed(tracker, clock, run.samples, i, to);
      await write();
      i = to;
    }
    const stats = store.snapshot();
    expect(stats.error).toBeNull();
    expect(stats.written).toBeGreaterThan(55);
    // the chunk rows are exactly those the header names
    const { header, chunks } = await storedPart();
    expect(chunks.size).toBeGreaterThan(20);
    expect(new Set(headerRefs(header, chunks))).toEqual(new Set(chunks.keys()));

    const again = await resume(new FakeClock(clock.t));
    expect(again.restored.restored).toEqual([run.cfg.id]);
    expect(again.store.snapshot().restoredAtStart).toBe(1);
    expect(driftState(again.tracker)).toEqual(driftState(tracker));
  }, 180_000);

  it("drops a corrupt or version-mismatched drift part with a reason and restores the tracker checkpoint", async () => {
    const warn = vi.spyOn(console, "warn").mockImplementation(() => {});
    try {
      const [victim] = await db.sequelize.query<{ hash: string }>("SELECT hash FROM drift_checkpoint_chunks ORDER BY hash LIMIT 1", { type: QueryTypes.SELECT });
      await db.sequelize.query("UPDATE drift_checkpoint_chunks SET data = CONCAT(data, 'x') WHERE hash = ?", { replacements: [victim!.hash] });
      const corrupt = await resume(new FakeClock());
      expect(corrupt.restored.restored).toEqual([run.cfg.id]);
      expect(corrupt.store.snapshot().droppedAtStart).toEqual([{ loopId: run.cfg.id, reason: expect.stringMatching(/does not match its hash/) as unknown }]);
      expect(warn.mock.calls.flat().join(" ")).toMatch(/drift part of its checkpoint was dropped.*does not match its hash/);

      await db.sequelize.query("UPDATE drift_checkpoint_chunks SET data = LEFT(data, LENGTH(data) - 1) WHERE hash = ?", { replacements: [victim!.hash] });
      await db.sequelize.query(`UPDATE drift_checkpoints SET header = REPLACE(header, '"format":1,', '"format":2,')`);
      const other = await resume(new FakeClock());
      expect(other.restored.restored).toEqual([run.cfg.id]);
      expect(other.store.snapshot().droppedAtStart[0]?.reason).toMatch(/format 2, this server reads 1/);
      expect(other.tracker.checkpoint().estimationSamples).toBeGreaterThan(2000);
      // its next write replaces the part and deletes what the new header does not name
      const drift = other.store.take(other.registry);
      await other.store.save(drift, Date.now());
      expect(other.store.snapshot().error).toBeNull();
      const { header, chunks } = await storedPart();
      expect(header).toContain('"format":1,');
      expect(new Set(headerRefs(header, chunks))).toEqual(new Set(chunks.keys()));
    } finally {
      warn.mockRestore();
    }
  }, 180_000);
});
