import { spawnSync } from "node:child_process";
import { QueryTypes } from "sequelize";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import { getLoopHistory, bucketWidth, historyColumns, historySchema, RADIUS_HOLD_MS } from "@/lib/data/loop-history";
import { parseHistory } from "@/lib/client/history";
import type { LoopStateDto, TenantContext } from "@/lib/domain/types";
import { HistoryAggregator, HistoryWriter } from "@/server/history";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { createPipelineFixture, type PipelineTenant } from "./fixture";
import { PYTHON } from "../helpers/python";

// Down-sampling of GET /api/loops/[loopId]/history. The bucket statistics are checked against
// NumPy (Debian python3-numpy: reshape into equal buckets, then min/mean/max per row), the
// reference implementation of this reduction.

let db: TestDatabase;
let a: PipelineTenant;
let b: PipelineTenant;
const T0 = Date.UTC(2026, 0, 5, 6, 0, 0);
const SECONDS = 7200;
const pv: number[] = [];

/** Park-Miller minimal standard generator (Park & Miller, CACM 31(10), 1988), seeded. */
function lcg(seed: number) {
  let s = seed;
  return () => (s = (s * 16807) % 2147483647) / 2147483647;
}

beforeAll(async () => {
  db = await createTestDatabase("hist");
  ({ a, b } = await createPipelineFixture(db.models));
  await db.sequelize.query("ALTER TABLE samples_1s REORGANIZE PARTITION pmax INTO (PARTITION p20260105 VALUES LESS THAN (1767657600000), PARTITION pmax VALUES LESS THAN MAXVALUE)");
  const rnd = lcg(7);
  for (let i = 0; i < SECONDS; i++) {
    // A slow wave, noise and rare spikes (the spikes are what min/max buckets must keep).
    let v = 50 + 10 * Math.sin(i / 600) + (rnd() - 0.5);
    if (rnd() < 0.002) v += rnd() < 0.5 ? 30 : -30;
    pv.push(Math.round(v * 1e6) / 1e6);
  }
  for (let i = 0; i < SECONDS; i += 1000) {
    const values = pv
      .slice(i, i + 1000)
      .map((v, k) => `(${a.loopId},${T0 + (i + k) * 1000},1,1,1,${v},${v},${v},30,30,30,'auto',1)`)
      .join(",");
    await db.sequelize.query(`INSERT INTO samples_1s (loop_id,t,sp_min,sp_mean,sp_max,pv_min,pv_mean,pv_max,mv_min,mv_mean,mv_max,mode,n) VALUES ${values}`);
  }
  // Minute rows for the other tier, with a radius.
  const minutes = Array.from({ length: 120 }, (_, m) => `(${a.loopId},${T0 + m * 60_000},1,1,1,40,${45 + (m % 7)},60,30,30,30,${0.8 + (m % 5) / 100},0.85,${0.9 + (m % 3) / 100},0,60)`);
  await db.sequelize.query(
    `INSERT INTO samples_1m (loop_id,t,sp_min,sp_mean,sp_max,pv_min,pv_mean,pv_max,mv_min,mv_mean,mv_max,radius_min,radius_mean,radius_max,manual_fraction,n) VALUES ${minutes.join(",")}`,
  );
  await db.sequelize.query(
    `INSERT INTO pole_snapshots (loop_id,t,radius,decay_ratio,poles,tracker_state) VALUES (${a.loopId},${T0 + 5000},0.91,0.2,'{"model":[{"re":0.9,"im":0.1}],"data":[]}','tracking'),(${a.loopId},${T0 + 7000},0.92,0.2,'{"model":[{"re":0.91,"im":0.1}],"data":[]}','tracking')`,
  );
});
afterAll(async () => {
  await db?.drop();
});

const ctxOf = (t: PipelineTenant): Pick<TenantContext, "tenantId"> => ({ tenantId: t.id });

function numpyBuckets(values: number[], width: number): { min: number[]; mean: number[]; max: number[] } {
  const py = `
import json, sys, numpy as np
d = json.load(sys.stdin)
v = np.array(d["v"], dtype=float).reshape(-1, d["w"])
print(json.dumps({"min": v.min(axis=1).tolist(), "mean": v.mean(axis=1).tolist(), "max": v.max(axis=1).tolist()}))
`;
  const r = spawnSync(PYTHON, ["-c", py], { input: JSON.stringify({ v: values, w: width }), encoding: "utf8" });
  if (r.status !== 0) throw new Error(`python3/numpy failed: ${r.stderr}`);
  return JSON.parse(r.stdout) as { min: number[]; mean: number[]; max: number[] };
}

describe("history down-sampling", () => {
  it("keeps every bucket's min and max and the mean (NumPy reference)", async () => {
    const h = await getLoopHistory(ctxOf(a), a.loopId, T0, T0 + SECONDS * 1000, 241, { sequelize: db.sequelize, now: T0 + SECONDS * 1000, secondRetentionH: 6 });
    expect(h).not.toBeNull();
    expect(h!.tier).toBe("1s");
    expect(h!.bucketMs).toBe(30_000); // 7200 s / 240 = 30 s per bucket
    expect(h!.points).toHaveLength(240);
    const ref = numpyBuckets(pv, 30);
    h!.points.forEach((p, i) => {
      expect(Date.parse(p.t)).toBe(T0 + i * 30_000);
      expect(p.pv.min).toBe(ref.min[i]);
      expect(p.pv.max).toBe(ref.max[i]);
      expect(p.pv.mean).toBeCloseTo(ref.mean[i]!, 9);
      expect(p.n).toBe(30);
    });
    // The extremes of the whole range survive down-sampling.
    expect(Math.max(...h!.points.map((p) => p.pv.max!))).toBe(Math.max(...pv));
    expect(Math.min(...h!.points.map((p) => p.pv.min!))).toBe(Math.min(...pv));
    // Pole snapshots: one per bucket (the last), radius taken into the bucket.
    expect(h!.poles.map((s) => s.radius)).toEqual([0.92]);
    expect(h!.points[0]!.radius).toEqual({ min: 0.91, mean: expect.closeTo(0.915, 12), max: 0.92 });
    // Buckets without a snapshot hold the estimate in force (the last snapshot, 7 s) while it is
    // at most RADIUS_HOLD_MS old: 30..120 s hold 0.92, 150 s on is a gap (the tracker stopped).
    expect(RADIUS_HOLD_MS).toBe(120_000);
    for (const i of [1, 2, 3, 4]) expect(h!.points[i]!.radius).toEqual({ min: 0.92, mean: 0.92, max: 0.92 });
    for (const i of [5, 6, 100]) expect(h!.points[i]!.radius).toBeNull();
  });

  it("never returns more than maxPoints buckets, for any range and limit", () => {
    for (const [span, max, tier] of [
      [7_200_000, 241, 1000],
      [7_200_000, 10, 1000],
      [86_400_000 * 30, 1000, 60_000],
      [61_000, 10_000, 1000],
      [3_599_999, 7, 1000],
    ] as const) {
      const w = bucketWidth(span, max, tier);
      expect(w % tier).toBe(0);
      // Buckets are epoch-aligned, so a range may touch one bucket more than span / width.
      expect(Math.ceil(span / w) + 1).toBeLessThanOrEqual(Math.max(max, 2));
    }
  });

  it("reads the 1-minute tier (with radius) for a range older than the per-second retention", async () => {
    const h = await getLoopHistory(ctxOf(a), a.loopId, T0, T0 + 7_200_000, 1000, { sequelize: db.sequelize, now: T0 + 48 * 3_600_000, secondRetentionH: 6 });
    expect(h!.tier).toBe("1m");
    expect(h!.bucketMs).toBe(60_000);
    expect(h!.points).toHaveLength(120);
    expect(h!.points[3]!.radius).toEqual({ min: expect.closeTo(0.83, 12), mean: expect.closeTo(0.85, 12), max: expect.closeTo(0.9, 12) });
    expect(h!.points[3]!.pv).toEqual({ min: 40, mean: 48, max: 60 });
  });

  it("gives the same buckets as columns (shape=columns) as it gives as rows", async () => {
    for (const now of [T0 + SECONDS * 1000, T0 + 48 * 3_600_000]) {
      const h = (await getLoopHistory(ctxOf(a), a.loopId, T0, T0 + 7_200_000, 241, { sequelize: db.sequelize, now, secondRetentionH: 6 }))!;
      const c = historyColumns(h);
      // what the API answers for ?shape=columns is built from the same buckets without the rows
      const direct = await getLoopHistory(ctxOf(a), a.loopId, T0, T0 + 7_200_000, 241, { sequelize: db.sequelize, now, secondRetentionH: 6, shape: "columns" });
      expect(direct).toEqual(c);
      expect(c).toMatchObject({ loopId: h.loopId, from: h.from, to: h.to, tier: h.tier, bucketMs: h.bucketMs, shape: "columns", poles: h.poles });
      expect(c.t).toEqual(h.points.map((p) => Date.parse(p.t)));
      expect(c.n).toEqual(h.points.map((p) => p.n));
      for (const k of ["sp", "pv", "mv"] as const) {
        expect(c[`${k}Min`]).toEqual(h.points.map((p) => p[k].min));
        expect(c[`${k}Mean`]).toEqual(h.points.map((p) => p[k].mean));
        expect(c[`${k}Max`]).toEqual(h.points.map((p) => p[k].max));
      }
      expect(c.radiusMin).toEqual(h.points.map((p) => p.radius?.min ?? null));
      expect(c.radiusMean).toEqual(h.points.map((p) => p.radius?.mean ?? null));
      expect(c.radiusMax).toEqual(h.points.map((p) => p.radius?.max ?? null));
      // the chart reads both shapes alike
      const fromRows = parseHistory(h);
      const fromCols = parseHistory(c);
      expect(Array.from(fromCols.cols.t)).toEqual(Array.from(fromRows.cols.t));
      for (const k of ["sp", "pv", "mv", "radius", "radiusMin", "radiusMax"] as const) expect(fromCols.cols[k]).toEqual(fromRows.cols[k]);
      expect(fromCols.snapshots).toEqual(fromRows.snapshots);
      expect(fromRows.cols.pv.some((v) => v !== null)).toBe(true);
    }
  });

  it("stores bad-quality samples as counts, outside the statistics, and the poor-fit state (migration 0103)", async () => {
    const writer = new HistoryWriter(db.sequelize);
    const agg = new HistoryAggregator({ second: (r) => writer.second(r), minute: (r) => writer.minute(r), snapshot: (r) => writer.snapshot(r) });
    const t = T0 + 3_600_000;
    const s = (dt: number, pv: number, quality?: "bad" | "uncertain") => ({ t: t + dt, sp: 50, pv, mv: 30, mode: "auto" as const, ...(quality ? { quality } : {}) });
    // -9999: a common "no reading" code; 3.4e38: float32 overflow (IEEE 754 single max)
    agg.addSamples(b.loopId, [s(0, 49), s(250, -9999, "bad"), s(500, 51), s(1000, 3.4e38, "bad"), s(1500, 50, "uncertain")]);
    agg.closeAll();
    const state = { loopId: b.loopId, tenantId: b.id, at: t + 2000, trackerState: "poor-fit" } as const;
    // only the fields the history writer reads
    const full = { ...state, spectralRadius: 0.9, decayRatio: 0.1, modelPoles: [], dataPoles: [], dataPolesKind: "closed-loop" } as unknown as LoopStateDto;
    agg.addState(full);
    writer.state(full);
    await writer.flush({ now: t, force: true });
    expect(writer.stats().errors).toBe(0);
    const h = (await getLoopHistory(ctxOf(b), b.loopId, t, t + 60_000, 100, { sequelize: db.sequelize, now: t + 60_000, secondRetentionH: 6 }))!;
    expect(h.points[0]).toMatchObject({ pv: { min: 49, mean: 50, max: 51 }, n: 2, bad: 1, uncertain: 0 });
    expect(h.points[1]).toMatchObject({ pv: { min: null, mean: null, max: null }, n: 0, bad: 1, uncertain: 1 });
    expect(h.poles.at(-1)?.trackerState).toBe("poor-fit");
    const cols = (await getLoopHistory(ctxOf(b), b.loopId, t, t + 60_000, 100, { sequelize: db.sequelize, now: t + 60_000, secondRetentionH: 6, shape: "columns" }))!;
    expect(cols.bad).toEqual([1, 1]);
    const [row] = await db.sequelize.query<{ tracker_state: string }>(`SELECT tracker_state FROM loop_states WHERE loop_id = ${b.loopId}`, { type: QueryTypes.SELECT });
    expect(row?.tracker_state).toBe("poor-fit");
  });

  it("returns null for another tenant's loop and for a loop that does not exist", async () => {
    expect(await getLoopHistory(ctxOf(b), a.loopId, T0, T0 + 60_000, 100, { sequelize: db.sequelize })).toBeNull();
    expect(await getLoopHistory(ctxOf(a), 987_654, T0, T0 + 60_000, 100, { sequelize: db.sequelize })).toBeNull();
  });

  it("validates the query: ISO or epoch-ms times, to after from, maxPoints 10..10000", () => {
    expect(historySchema.parse({ from: "2026-01-05T06:00:00Z", to: String(T0 + 1000) })).toEqual({ from: T0, to: T0 + 1000, maxPoints: 1000, tier: "auto", shape: "rows" });
    expect(historySchema.parse({ from: "2026-01-05T06:00:00Z", to: String(T0 + 1000), shape: "columns" }).shape).toBe("columns");
    for (const bad of [
      { from: "yesterday", to: "2026-01-05T06:00:00Z" },
      { from: "2026-01-05T06:00:00Z", to: "2026-01-05T05:00:00Z" },
      { from: "2026-01-05T06:00:00Z", to: "2026-01-05T07:00:00Z", maxPoints: "5" },
      { from: "2026-01-05T06:00:00Z", to: "2026-01-05T07:00:00Z", maxPoints: "abc" },
      { from: "2020-01-01T00:00:00Z", to: "2026-01-05T07:00:00Z" },
      { to: "2026-01-05T07:00:00Z" },
      { from: "2026-01-05T06:00:00Z", to: "2026-01-05T07:00:00Z", shape: "csv" },
    ]) {
      expect(historySchema.safeParse(bad).success).toBe(false);
    }
  });
});

// The route handlers themselves: the session guard is replaced by a fixed context (the guard has
// its own tests on the real server); parsing, tenancy and status codes are the route's own.
const guard = vi.hoisted(() => ({ ctx: null as TenantContext | null }));
vi.mock("@/lib/auth/guard", () => ({
  requireContext: async () => {
    if (!guard.ctx) throw new Error("no context");
    return guard.ctx;
  },
}));
vi.mock("@/lib/data/db/sequelize", async (orig) => ({ ...(await orig<object>()), getSequelize: () => db.sequelize }));

describe("GET /api/loops/[loopId]/history and /api/loops/[loopId]", () => {
  const as = (t: PipelineTenant) => {
    guard.ctx = { userId: 1, email: "v@example.test", name: "V", tenantId: t.id, tenantSlug: t.slug, tenantName: t.slug, role: "viewer" };
  };
  const url = (id: string, q: string) => new Request(`http://127.0.0.1/api/loops/${id}/history?${q}`);
  const params = (loopId: string) => ({ params: Promise.resolve({ loopId }) });

  it("answers 200, 404 for another tenant's loop, 422 for bad parameters", async () => {
    const { GET } = await import("@/app/api/loops/[loopId]/history/route");
    const detail = await import("@/app/api/loops/[loopId]/route");
    const q = `from=${new Date(T0).toISOString()}&to=${new Date(T0 + 600_000).toISOString()}&maxPoints=20`;
    as(a);
    const ok = await GET(url(String(a.loopId), q), params(String(a.loopId)));
    expect(ok.status).toBe(200);
    const body = (await ok.json()) as { points: unknown[]; loopId: number };
    expect(body.loopId).toBe(a.loopId);
    expect(body.points.length).toBeLessThanOrEqual(20);
    expect((await detail.GET(new Request("http://127.0.0.1/x"), params(String(a.loopId)))).status).toBe(200);

    as(b);
    expect((await GET(url(String(a.loopId), q), params(String(a.loopId)))).status).toBe(404);
    expect((await detail.GET(new Request("http://127.0.0.1/x"), params(String(a.loopId)))).status).toBe(404);
    expect((await GET(url("abc", q), params("abc"))).status).toBe(422);
    expect((await GET(url(String(b.loopId), "from=x&to=y"), params(String(b.loopId)))).status).toBe(422);
    const r = await GET(url(String(b.loopId), `from=${T0 + 1000}&to=${T0}`), params(String(b.loopId)));
    expect(r.status).toBe(422);
    expect(((await r.json()) as { error: string }).error).toMatch(/to must be after from/);
  });
});
