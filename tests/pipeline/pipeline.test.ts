import { afterAll, beforeAll, describe, expect, it } from "vitest";
import mqtt from "mqtt";
import { QueryTypes } from "sequelize";
import { startPipeline, type PipelineService } from "@/server/pipeline";
import { ingestDiagnostics } from "@/lib/data/loop-diagnostics";
import { DAY_MS, listPartitions, partitionName } from "@/lib/data/db/partitions";
import { listLoops, getLoop } from "@/lib/data/loops";
import type { DeviceIdentity } from "@/server/ingest";
import type { SampleDto } from "@/lib/domain/types";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { createPipelineFixture, PiLoop, type PipelineTenant } from "./fixture";
import { ManualClock, testContext } from "./helpers";
import { testLoopRow } from "@/tests/helpers/loop-row";

// The live pipeline against a real MariaDB (tests/setup/db.ts) and a real aedes broker on port 0.
// History tier rules restate docs/architecture.md §6; aggregates are checked against the raw samples sent.

let db: TestDatabase;
let a: PipelineTenant;
let b: PipelineTenant;

beforeAll(async () => {
  db = await createTestDatabase("pipe");
  ({ a, b } = await createPipelineFixture(db.models));
});
afterAll(async () => {
  await db?.drop();
});

const identity = (t: PipelineTenant): DeviceIdentity => ({ key: t.device.keyId, tenantId: t.id, tenantSlug: t.slug, siteSlug: t.siteSlug });
const topic = (t: PipelineTenant) => `rg/${t.slug}/${t.siteSlug}/fic-101/samples`;
const rows = <T extends object>(sql: string, replacements: unknown[] = []) => db.sequelize.query<T>(sql, { replacements, type: QueryTypes.SELECT });

async function start(clock: ManualClock): Promise<PipelineService> {
  return startPipeline(testContext(clock), {
    sequelize: db.sequelize,
    broker: { host: "127.0.0.1", port: 0, mqttUrl: null },
    history: { partitionEveryMs: 0 },
  });
}

describe("live pipeline with MariaDB", () => {
  it("persists the history tiers and resumes tracking from the checkpoint after a restart", async () => {
    const clock = new ManualClock(Math.floor((Date.now() - 3 * 3_600_000) / 60_000) * 60_000);
    const plant = new PiLoop();
    const sent: SampleDto[] = [];
    let modelBefore = "";
    let samplesBefore = 0;
    let p = await start(clock);
    try {
      // The first samples travel the whole way: device -> MQTT -> broker -> ingest.
      const c = await mqtt.connectAsync(`mqtt://127.0.0.1:${p.broker.address()!.port}`, {
        username: a.device.keyId,
        password: a.device.secret,
        clientId: a.device.clientId,
        reconnectPeriod: 0,
      });
      const first: SampleDto[] = [];
      for (let i = 0; i < 10; i++) {
        clock.advance(1000);
        first.push(plant.next(clock.now()));
      }
      await c.publishAsync(topic(a), JSON.stringify(first), { qos: 1 });
      const end = Date.now() + 5000;
      while (p.ingest.counters.totals(a.id).acceptedSamples < 10 && Date.now() < end) await new Promise((r) => setTimeout(r, 10));
      await c.endAsync();
      expect(p.ingest.counters.totals(a.id).acceptedSamples).toBe(10);
      // The admin's device list shows when the gateway was last seen.
      const seen = await rows<{ last_seen_at: Date | null }>("SELECT last_seen_at FROM device_credentials WHERE key_id = ?", [a.device.keyId]);
      expect(seen[0]!.last_seen_at).not.toBeNull();
      sent.push(...first);

      // Then 20 minutes at 1 Hz, one message per second, straight into ingest.
      for (let m = 0; m < 1200; m++) {
        clock.advance(1000);
        const s = plant.next(clock.now());
        const out = p.ingest.handle({ topic: topic(a), payload: JSON.stringify(s), device: identity(a) });
        expect(out.accepted).toBe(1);
        sent.push(s);
        if (m % 100 === 0) await p.history.flushNow();
      }
    } finally {
      const before = p.registry.get(a.loopId)!;
      modelBefore = JSON.stringify(before.plantModel());
      samplesBefore = before.current.samples;
      await p.stop();
    }
    expect(samplesBefore).toBeGreaterThanOrEqual(1200);

    // History: one per-second row per 1 Hz sample with min = mean = max = the sample.
    const secs = await rows<{ t: number; pv_min: number; pv_mean: number; pv_max: number; n: number }>(
      "SELECT t, pv_min, pv_mean, pv_max, n FROM samples_1s WHERE loop_id = ? ORDER BY t",
      [a.loopId],
    );
    expect(secs).toHaveLength(sent.length);
    for (let i = 0; i < sent.length; i += 97) {
      const r = secs[i]!;
      expect(Number(r.t)).toBe(Math.floor(sent[i]!.t / 1000) * 1000);
      expect([r.pv_min, r.pv_mean, r.pv_max, r.n]).toEqual([sent[i]!.pv, sent[i]!.pv, sent[i]!.pv, 1]);
    }
    // Minute rows: min/max/mean of PV over the samples of each minute.
    const mins = await rows<{ t: number; pv_min: number; pv_mean: number; pv_max: number; n: number; radius_max: number | null }>(
      "SELECT t, pv_min, pv_mean, pv_max, n, radius_max FROM samples_1m WHERE loop_id = ? ORDER BY t",
      [a.loopId],
    );
    expect(mins.length).toBeGreaterThanOrEqual(20);
    for (const r of mins) {
      const inMin = sent.filter((s) => Math.floor(s.t / 60_000) * 60_000 === Number(r.t));
      expect(Number(r.n)).toBe(inMin.length);
      expect(r.pv_min).toBe(Math.min(...inMin.map((s) => s.pv)));
      expect(r.pv_max).toBe(Math.max(...inMin.map((s) => s.pv)));
      expect(r.pv_mean).toBeCloseTo(inMin.reduce((x, s) => x + s.pv, 0) / inMin.length, 9);
    }
    expect(mins.some((r) => r.radius_max !== null)).toBe(true);
    const snaps = await rows<{ n: number }>("SELECT COUNT(*) AS n FROM pole_snapshots WHERE loop_id = ?", [a.loopId]);
    expect(Number(snaps[0]!.n)).toBeGreaterThan(0);
    const state = await rows<{ latest: string | object; at: number }>("SELECT latest, at FROM loop_states WHERE loop_id = ?", [a.loopId]);
    const raw = state[0]!.latest;
    const latest = (typeof raw === "string" ? JSON.parse(raw) : raw) as { last: SampleDto | null; spectralRadius: number | null };
    expect(Number.isFinite(latest.spectralRadius)).toBe(true);
    expect(latest.last?.t).toBe(sent.at(-1)!.t);
    const cps = await rows<{ n: number }>("SELECT COUNT(*) AS n FROM estimator_checkpoints WHERE loop_id = ?", [a.loopId]);
    expect(Number(cps[0]!.n)).toBe(1);
    // the rim forecast's drift part beside it (server/tracking/drift-store.ts), in its own tables
    const drift = await rows<{ n: number }>("SELECT COUNT(*) AS n FROM drift_checkpoints d JOIN drift_checkpoint_chunks c USING (loop_id) WHERE loop_id = ?", [a.loopId]);
    expect(Number(drift[0]!.n)).toBeGreaterThan(0);

    // Restart: same estimator, no re-learning; replayed samples are duplicates.
    p = await start(clock);
    try {
      const h = await p.health();
      expect((h.detail as { trackers: { restoredAtStart: number } }).trackers.restoredAtStart).toBe(2);
      expect((h.detail as { checkpoint: { drift: { restoredAtStart: number; droppedAtStart: unknown[] } } }).checkpoint.drift).toMatchObject({ restoredAtStart: 2, droppedAtStart: [] });
      expect(JSON.stringify(p.registry.get(a.loopId)!.plantModel())).toBe(modelBefore);
      const replay = p.ingest.handle({ topic: topic(a), payload: JSON.stringify(sent.slice(-10)), device: identity(a) });
      expect(replay).toMatchObject({ accepted: 0, rejected: { duplicate: 1, "out-of-order": 9 } });
      const more: SampleDto[] = [];
      for (let i = 0; i < 10; i++) {
        clock.advance(1000);
        more.push(plant.next(clock.now()));
      }
      expect(p.ingest.handle({ topic: topic(a), payload: JSON.stringify(more), device: identity(a) }).accepted).toBe(10);
      expect(p.registry.get(a.loopId)!.current.samples).toBe(samplesBefore + 10);

      // The read side sees the same loop and state, scoped to its tenant.
      const list = await listLoops({ tenantId: a.id }, { sequelize: db.sequelize, liveState: (id) => p.loopState(id) });
      expect(list.map((l) => l.id)).toEqual([a.loopId]);
      expect(list[0]!.state?.samples).toBe(samplesBefore + 10);
      expect(await getLoop({ tenantId: b.id }, a.loopId, { sequelize: db.sequelize })).toBeNull();
    } finally {
      await p.stop();
    }
  });

  it("stores the newest checkpoint at shutdown even when earlier checkpoint writes are still in flight", async () => {
    // Timer-fired checkpoints are not awaited; the one written at stop must not be overtaken by
    // an older snapshot finishing later on another pool connection.
    const clock = new ManualClock(Math.floor(Date.now() / 60_000) * 60_000 + 60_000);
    const plant = new PiLoop(0.85, 1.2);
    // The database answers earlier checkpoint writes later (the k-th waits (20 - k) x 10 ms), the
    // order a busy pool can produce; without ordered writes the oldest snapshot would land last.
    let k = 0;
    const slowFirst = new Proxy(db.sequelize, {
      get(target, prop) {
        if (prop === "query") {
          return async (sql: unknown, ...rest: unknown[]) => {
            if (typeof sql === "string" && sql.trimStart().startsWith("INSERT INTO estimator_checkpoints")) {
              await new Promise((r) => setTimeout(r, Math.max(0, 20 - k++) * 10));
            }
            return (target.query as (...args: unknown[]) => Promise<unknown>)(sql, ...rest);
          };
        }
        const v = Reflect.get(target, prop, target) as unknown;
        return typeof v === "function" ? (v as (...args: unknown[]) => unknown).bind(target) : v;
      },
    });
    let p = await startPipeline(testContext(clock), {
      sequelize: slowFirst,
      broker: { host: "127.0.0.1", port: 0, mqttUrl: null },
      history: { partitionEveryMs: 0 },
    });
    let modelAtStop = "";
    let samplesAtStop = 0;
    const pending: Promise<number>[] = [];
    try {
      for (let m = 0; m < 400; m++) {
        clock.advance(1000);
        expect(p.ingest.handle({ topic: topic(a), payload: JSON.stringify(plant.next(clock.now())), device: identity(a) }).accepted).toBe(1);
        if (m % 20 === 0) {
          pending.push(p.checkpointNow());
          await new Promise((r) => setImmediate(r)); // let that write start before the next samples
        }
      }
    } finally {
      const t = p.registry.get(a.loopId)!;
      modelAtStop = JSON.stringify(t.plantModel());
      samplesAtStop = t.current.samples;
      await p.stop();
    }
    // Every requested write finished, none failed (a failure returns 0 loops written).
    for (const n of await Promise.all(pending)) expect(n).toBe(2);
    p = await start(clock);
    try {
      expect(JSON.stringify(p.registry.get(a.loopId)!.plantModel())).toBe(modelAtStop);
      clock.advance(1000);
      expect(p.ingest.handle({ topic: topic(a), payload: JSON.stringify(plant.next(clock.now())), device: identity(a) }).accepted).toBe(1);
      expect(p.registry.get(a.loopId)!.current.samples).toBe(samplesAtStop + 1);
    } finally {
      await p.stop();
    }
  });

  it("picks up a new loop on loop:config-changed and drops a disabled one", async () => {
    const clock = new ManualClock(Date.now());
    const ctx = testContext(clock);
    const p = await startPipeline(ctx, { sequelize: db.sequelize, broker: { host: "127.0.0.1", port: 0, mqttUrl: null }, history: { partitionEveryMs: 0 } });
    try {
      const loop = await db.models.Loop.create(
        testLoopRow({ tenantId: a.id, siteId: a.siteId, areaId: null }, {
          tag: "TIC 2.04/B",
          slug: "tic-2-04-b",
          kind: "temperature",
          units: "degC",
          pvHi: 200,
          tiValue: 30,
        }),
      );
      const t = `rg/${a.slug}/north/tic-2-04-b/samples`;
      const s = (k: number) => JSON.stringify({ t: clock.now() - 10_000 + k, sp: 80, pv: 79, mv: 20, mode: "auto" });
      expect(p.ingest.handle({ topic: t, payload: s(0), device: identity(a) }).rejected).toEqual({ "unknown-loop": 1 });
      await p.reloadLoop(loop.id);
      expect(p.ingest.handle({ topic: t, payload: s(1), device: identity(a) }).accepted).toBe(1);
      expect(p.registry.get(loop.id)).toBeDefined();

      await loop.update({ enabled: false });
      ctx.bus.emit("loop:config-changed", loop.id);
      const end = Date.now() + 5000;
      while (p.registry.get(loop.id) && Date.now() < end) await new Promise((r) => setTimeout(r, 10));
      expect(p.registry.get(loop.id)).toBeUndefined();
      await loop.destroy();
      await p.reloadLoop(loop.id);
      expect(p.ingest.handle({ topic: t, payload: s(2), device: identity(a) }).rejected).toEqual({ "unknown-loop": 1 });
    } finally {
      await p.stop();
    }
  });

  it("shows an admin the ingest counters of their own tenant's devices only", async () => {
    const clock = new ManualClock(Date.now());
    const p = await startPipeline(testContext(clock), { sequelize: db.sequelize, broker: { host: "127.0.0.1", port: 0, mqttUrl: null }, history: { partitionEveryMs: 0 } });
    try {
      p.ingest.handle({ topic: topic(a), payload: "{oops", device: identity(a) });
      p.ingest.handle({ topic: topic(a), payload: JSON.stringify({ t: clock.now() + 60_000, sp: 1, pv: 1, mv: 1, mode: "auto" }), device: identity(a) });
      const da = await ingestDiagnostics({ tenantId: a.id }, { sequelize: db.sequelize, pipeline: p });
      expect(da.running).toBe(true);
      expect(da.devices.map((d) => d.device)).toEqual([a.device.keyId]);
      expect(da.devices[0]!.rejected).toMatchObject({ "bad-json": 1, future: 1 });
      // Partition upkeep ran at start: today and three days ahead exist in every history table.
      for (const table of ["samples_1s", "samples_1m", "pole_snapshots"]) {
        const names = (await listPartitions(db.sequelize, table)).map((x) => x.name);
        for (let d = 0; d <= 3; d++) expect(names).toContain(partitionName(clock.now() + d * DAY_MS));
      }
      const dbb = await ingestDiagnostics({ tenantId: b.id }, { sequelize: db.sequelize, pipeline: p });
      expect(dbb.devices.map((d) => [d.device, d.messages])).toEqual([[b.device.keyId, 0]]);
      expect(dbb.totals.rejected["bad-json"]).toBe(0);
    } finally {
      await p.stop();
    }
  });
});
