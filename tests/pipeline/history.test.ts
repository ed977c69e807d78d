import { describe, expect, it } from "vitest";
import type { Sequelize } from "sequelize";
import { HistoryAggregator, type MinuteBucketRow, type PoleSnapshotRow, type SecondBucketRow } from "@/server/history/aggregate";
import { HistoryWriter } from "@/server/history/writer";
import { startRealtimeEmitter } from "@/server/realtime/emitter";
import type { LoopStateDto, SampleDto } from "@/lib/domain/types";
import { ManualClock, testContext } from "./helpers";

// History tiers per docs/architecture.md §6 and batching per §8; min/mean/max are checked against
// direct reductions of the samples fed in (identities, no stored expectations).

const T0 = Date.UTC(2026, 0, 5, 8, 0, 0);
const sample = (t: number, pv: number, mode: SampleDto["mode"] = "auto"): SampleDto => ({ t, sp: 50, pv, mv: pv / 2, mode });
const state = (loopId: number, at: number, radius: number | null, trackerState: LoopStateDto["trackerState"] = "tracking"): LoopStateDto =>
  ({ loopId, tenantId: 1, at, receivedAt: at, trackerState, spectralRadius: radius, decayRatio: null, modelPoles: [], dataPoles: [], dataPolesKind: "closed-loop" }) as unknown as LoopStateDto;

function collect() {
  const out = { seconds: [] as SecondBucketRow[], minutes: [] as MinuteBucketRow[], snaps: [] as PoleSnapshotRow[] };
  const agg = new HistoryAggregator({ second: (r) => out.seconds.push(r), minute: (r) => out.minutes.push(r), snapshot: (r) => out.snaps.push(r) }, { snapshotEveryMs: 60_000, snapshotRadiusStep: 0.01 });
  return { agg, out };
}

describe("history aggregation", () => {
  it("turns a 4 Hz loop into one row per second with min, mean and max, and one row per minute", () => {
    const { agg, out } = collect();
    const samples = Array.from({ length: 4 * 150 }, (_, i) => sample(T0 + i * 250, 40 + ((i * 37) % 11) + (i % 4 === 0 ? 5 : 0), i % 20 === 0 ? "manual" : "auto"));
    for (let i = 0; i < samples.length; i += 3) agg.addSamples(7, samples.slice(i, i + 3));
    agg.closeAll();
    expect(out.seconds).toHaveLength(150);
    for (const r of out.seconds) {
      const inSec = samples.filter((s) => Math.floor(s.t / 1000) * 1000 === r.t).map((s) => s.pv);
      expect(r.n).toBe(4);
      expect(r.pv).toEqual([Math.min(...inSec), inSec.reduce((a, b) => a + b, 0) / 4, Math.max(...inSec)]);
    }
    expect(out.minutes.map((m) => [m.t, m.n])).toEqual([
      [T0, 240],
      [T0 + 60_000, 240],
      [T0 + 120_000, 120],
    ]);
    const m0 = samples.filter((s) => s.t < T0 + 60_000);
    expect(out.minutes[0]!.pv[0]).toBe(Math.min(...m0.map((s) => s.pv)));
    expect(out.minutes[0]!.pv[2]).toBe(Math.max(...m0.map((s) => s.pv)));
    expect(out.minutes[0]!.manualFraction).toBeCloseTo(m0.filter((s) => s.mode === "manual").length / m0.length, 12);
  });

  it("keeps one row per sample for loops at 1 Hz and slower", () => {
    const { agg, out } = collect();
    agg.addSamples(1, [sample(T0, 1), sample(T0 + 1000, 2), sample(T0 + 5000, 3)]);
    agg.closeAll();
    expect(out.seconds.map((r) => [r.t, r.n, r.pv[1]])).toEqual([
      [T0, 1, 1],
      [T0 + 1000, 1, 2],
      [T0 + 5000, 1, 3],
    ]);
  });

  it("adds the spectral radius to the minute and snapshots poles on change or at the period", () => {
    const { agg, out } = collect();
    agg.addSamples(1, [sample(T0, 1)]);
    agg.addState(state(1, T0 + 1000, 0.9));
    agg.addState(state(1, T0 + 2000, 0.905)); // moved 0.005: no snapshot
    agg.addState(state(1, T0 + 3000, 0.93)); // moved 0.03: snapshot
    agg.addState(state(1, T0 + 4000, 0.93, "low-excitation")); // state changed: snapshot
    agg.addState(state(1, T0 + 64_000, 0.93, "low-excitation")); // period passed: snapshot (and closes the minute)
    agg.closeAll();
    expect(out.snaps.map((s) => s.t)).toEqual([T0 + 1000, T0 + 3000, T0 + 4000, T0 + 64_000]);
    expect(out.minutes[0]!.radius).toEqual([0.9, (0.9 + 0.905 + 0.93 + 0.93) / 4, 0.93]);
    // A late estimate for a minute already written does not create a second, radius-only row.
    agg.addState(state(1, T0 + 5000, 0.95));
    agg.closeAll();
    expect(out.minutes.filter((m) => m.t === T0)).toHaveLength(1);
  });

  it("closes the buckets of a loop that went quiet", () => {
    const { agg, out } = collect();
    agg.addSamples(1, [sample(T0 + 100, 1)]);
    agg.closeIdle(T0 + 2_500);
    expect(out.seconds).toHaveLength(0);
    agg.closeIdle(T0 + 3_100);
    expect(out.seconds).toHaveLength(1);
    agg.closeIdle(T0 + 62_100);
    expect(out.minutes).toHaveLength(1);
  });
});

describe("history writer", () => {
  function fakeDb(fail: () => boolean) {
    const statements: string[] = [];
    const db = {
      escape: (s: string) => `'${s.replace(/'/g, "''")}'`,
      query: async (sql: string) => {
        if (fail()) throw new Error("database unavailable");
        statements.push(sql);
        return [];
      },
    } as unknown as Sequelize;
    return { db, statements };
  }
  const row = (t: number): SecondBucketRow => ({ loopId: 1, t, sp: [1, 1, 1], pv: [2, 2, 2], mv: [3, 3, 3], mode: "auto", n: 1 });

  it("writes multi-row INSERT ... ON DUPLICATE KEY UPDATE statements in batches", async () => {
    const { db, statements } = fakeDb(() => false);
    const w = new HistoryWriter(db, { batchRows: 100 });
    for (let i = 0; i < 250; i++) w.second(row(T0 + i * 1000));
    await w.flush({ now: T0 });
    expect(statements).toHaveLength(3);
    // n = 1 good sample, then the bad and uncertain counts (0, absent in the row)
    expect(statements[0]).toMatch(/^INSERT INTO samples_1s \(loop_id,t,.*,n,bad_n,uncertain_n\) VALUES \(1,1767600000000,1,1,1,2,2,2,3,3,3,'auto',1,0,0\),/);
    expect(statements[0]).toMatch(/ON DUPLICATE KEY UPDATE sp_min=VALUES\(sp_min\)/);
    expect(w.stats().written.samples_1s).toBe(250);
  });

  it("keeps rows while the database is down, sheds beyond its bound and counts what it shed", async () => {
    let down = true;
    const { db, statements } = fakeDb(() => down);
    const w = new HistoryWriter(db, { batchRows: 50, maxSecondRows: 120 });
    for (let i = 0; i < 200; i++) w.second(row(T0 + i * 1000));
    expect(w.stats().shed.samples_1s).toBe(80);
    await w.flush({ now: T0 });
    expect(w.stats().errors).toBe(1);
    expect(w.stats().queued.samples_1s).toBe(120);
    down = false;
    await w.flush({ now: T0 + 1000 });
    expect(w.stats().written.samples_1s).toBe(120);
    expect(statements.join("").match(/\(1,\d+,/g)).toHaveLength(120);
  });

  it("writes NULL for a non-finite value and drops a row it cannot write instead of blocking", async () => {
    const { db, statements } = fakeDb(() => false);
    const w = new HistoryWriter(db);
    w.second({ ...row(T0), pv: [Number.NaN, 1, Infinity] });
    w.second({ ...row(T0 + 1000), t: 1.5 });
    await w.flush({ now: T0 });
    expect(statements[0]).toContain("(1,1767600000000,1,1,1,NULL,1,NULL,3,3,3,'auto',1,0,0)");
    expect(w.stats().invalidRows).toBe(1);
  });
});

describe("realtime batching", () => {
  it("sends each tenant at most one loop:state batch per 500 ms, holding only its loops, and samples only to watched rooms", () => {
    const clock = new ManualClock(T0);
    const ctx = testContext(clock);
    const emitted: { room: string; event: string; payload: unknown }[] = [];
    const rooms = new Map<string, Set<string>>([
      ["loop:5", new Set(["socket-1"])],
      ["tenant:1", new Set(["socket-1"])],
      ["tenant:2", new Set(["socket-2"])],
    ]);
    ctx.io = {
      to: (room: string) => ({ emit: (event: string, payload: unknown) => emitted.push({ room, event, payload }) }),
      sockets: { adapter: { rooms } },
    } as unknown as typeof ctx.io;
    const em = startRealtimeEmitter(ctx);
    for (let k = 0; k < 100; k++) {
      em.state({ ...state(5, T0 + k, 0.9), tenantId: 1 });
      em.state({ ...state(6, T0 + k, 0.8), tenantId: 2 });
      em.samples(5, [sample(T0 + k * 10, k)]);
      em.samples(6, [sample(T0 + k * 10, k)]); // nobody watches loop 6
      clock.advance(10); // 1 s in all
    }
    const states = emitted.filter((e) => e.event === "loop:state");
    expect(states.filter((e) => e.room === "tenant:1")).toHaveLength(2);
    expect(states.filter((e) => e.room === "tenant:2")).toHaveLength(2);
    for (const e of states) {
      const batch = e.payload as LoopStateDto[];
      expect(batch.every((s) => `tenant:${s.tenantId}` === e.room)).toBe(true);
      expect(batch).toHaveLength(1); // the latest state per loop only
    }
    const samples = emitted.filter((e) => e.event === "loop:samples");
    expect(samples.every((e) => e.room === "loop:5")).toBe(true);
    em.flush();
    expect(emitted.filter((e) => e.event === "loop:samples").flatMap((e) => (e.payload as { samples: SampleDto[] }).samples)).toHaveLength(100);
    em.stop();
  });
});
