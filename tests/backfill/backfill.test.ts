/**
 * Historian backfill (server/backfill): the same samples given live and as a backfilled CSV give
 * the same estimator state and the same history rows; rejections are counted with their lines;
 * a second backfill over the same times writes nothing twice and merges what is new; samples
 * older than the per-second retention reach the 1-minute tier only, in a day partition made
 * for them; a cancelled job keeps what it wrote and installs no model. Real MariaDB, no broker.
 * The plant is the invented first-order PI loop of the pipeline fixture.
 */
import { QueryTypes } from "sequelize";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import { loadLoopConfigs, type LoadedLoop } from "@/server/ingest/loop-source";
import { HistoryAggregator } from "@/server/history/aggregate";
import { HistoryWriter } from "@/server/history/writer";
import { TrackerRegistry } from "@/server/tracking/registry";
import { Bus, type Clock } from "@/server/context";
import { BackfillHost } from "@/server/backfill/host";
import type { BackfillProgress } from "@/server/backfill/job";
import { listPartitions, maintainHistoryPartitions, partitionName, DAY_MS } from "@/lib/data/db/partitions";
import type { SampleDto } from "@/lib/domain/types";
import { createPipelineFixture, PiLoop, type PipelineTenant } from "../pipeline/fixture";
import { createTestDatabase, type TestDatabase } from "../setup/db";

let db: TestDatabase;
let fx: { a: PipelineTenant; b: PipelineTenant };

class SetClock implements Clock {
  constructor(public t: number) {}
  now() {
    return this.t;
  }
  setTimeout() {
    return { cancel() {} };
  }
  setInterval() {
    return { cancel() {} };
  }
}

const MIN = 60_000;
const NOW = Math.floor(Date.now() / MIN) * MIN;

function simulate(from: number, n: number): SampleDto[] {
  const sim = new PiLoop();
  const out: SampleDto[] = [];
  for (let k = 0; k < n; k++) out.push(sim.next(from + k * 1000));
  return out;
}
const csvOf = (samples: SampleDto[], head = "t,sp,pv,mv,mode") => [head, ...samples.map((s) => `${s.t / 1000},${s.sp},${s.pv},${s.mv},${s.mode}`)].join("\r\n") + "\r\n";
/** The text as a stream of 8 KiB chunks (the job must not need it whole). */
async function* chunks(text: string, delayEvery = 0): AsyncGenerator<Buffer> {
  const buf = Buffer.from(text);
  for (let i = 0, k = 0; i < buf.length; i += 8192, k++) {
    if (delayEvery && k % delayEvery === 0) await new Promise((r) => setTimeout(r, 5));
    yield buf.subarray(i, i + 8192);
  }
}

async function loaded(loopId: number): Promise<LoadedLoop> {
  const [l] = await loadLoopConfigs(db.sequelize, loopId);
  if (!l?.config) throw new Error("fixture loop has no config");
  return l;
}

function setup(_clock: SetClock) {
  const bus = new Bus();
  const writer = new HistoryWriter(db.sequelize, { batchRows: 500 });
  return { bus, writer };
}

async function rows(table: string, loopId: number, cols: string): Promise<Record<string, unknown>[]> {
  return db.sequelize.query(`SELECT ${cols} FROM ${table} WHERE loop_id = ? ORDER BY t`, { replacements: [loopId], type: QueryTypes.SELECT });
}
const SECOND_COLS = "t, sp_min, sp_mean, sp_max, pv_min, pv_mean, pv_max, mv_min, mv_mean, mv_max, mode, n, bad_n, uncertain_n";
const MINUTE_COLS = "t, sp_min, sp_mean, sp_max, pv_min, pv_mean, pv_max, mv_min, mv_mean, mv_max, radius_min, radius_mean, radius_max, manual_fraction, n, bad_n, uncertain_n";
const SNAP_COLS = "t, radius, decay_ratio, poles, tracker_state";

beforeAll(async () => {
  db = await createTestDatabase("backfill");
  fx = await createPipelineFixture(db.models);
});
afterAll(async () => {
  await db?.drop();
});

describe("backfill equals live", () => {
  it("the same 40 minutes of samples, live (loop A) and backfilled (loop B), give the same estimator state and history", async () => {
    const samples = simulate(NOW - 2 * 3_600_000, 2400);
    const cfgA = (await loaded(fx.a.loopId)).config!;
    const cfgB = await loaded(fx.b.loopId);

    // Live: the pipeline's order per message (tracker, then history), receive time = sample time.
    const live = new SetClock(samples[0]!.t);
    const { bus: liveBus, writer: liveWriter } = setup(live);
    const liveAgg = new HistoryAggregator({ second: (r) => liveWriter.second(r), minute: (r) => liveWriter.minute(r), snapshot: (r) => liveWriter.snapshot(r) });
    liveBus.on("tracker:update", (st) => liveAgg.addState(st));
    // each loop's own alarm level, as the pipeline supplies it (server/pipeline.ts)
    const levelOf = vi.fn((_loopId: number) => 0.3);
    const liveReg = new TrackerRegistry({ bus: liveBus, clock: live }, [cfgA], { alarmDecayRatio: levelOf });
    for (const s of samples) {
      live.t = s.t;
      liveReg.push(fx.a.loopId, [{ ...s }], s.t);
      liveAgg.addSamples(fx.a.loopId, [{ ...s }]);
    }
    liveAgg.closeAll();
    await liveWriter.flush({ force: true });

    // Backfill of the same samples as CSV into loop B, whose tracker has seen nothing.
    const clock = new SetClock(NOW);
    const { bus, writer } = setup(clock);
    const registry = new TrackerRegistry({ bus, clock }, [cfgB.config!], { alarmDecayRatio: levelOf });
    const updates: number[] = [];
    bus.on("tracker:update", (st) => updates.push(st.loopId));
    const host = new BackfillHost({ sequelize: db.sequelize, writer, registry, bus, clock, secondRetentionH: 6, minuteRetentionD: 180 });
    const res = await host.run({ route: cfgB.route, config: cfgB.config, enabled: true, userId: null, fileName: "tic.csv", totalBytes: null, replaceModel: false }, chunks(csvOf(samples)));
    expect(res.status).toBe("done");
    expect(res.rejected).toBe(0);
    expect(res.accepted).toBe(2400);
    expect(res.minuteOnly).toBe(0);
    expect(res.trained).toBe(true);
    expect(updates).toEqual([fx.b.loopId]); // one state when the trained tracker went live, not one per sample

    const a = liveReg.get(fx.a.loopId)!;
    const b = registry.get(fx.b.loopId)!;
    const { loopId: _la, ...cpA } = a.checkpoint();
    const { loopId: _lb, ...cpB } = b.checkpoint();
    expect(cpB).toEqual(cpA);
    expect(cpA.samplesSeen).toBe(2400);
    expect(b.current.modelPoles).toEqual(a.current.modelPoles);
    expect(b.current.spectralRadius).toBe(a.current.spectralRadius);
    // the replayed tracker asked for loop B's own alarm level, not the default policy's
    expect(levelOf).toHaveBeenCalledWith(fx.b.loopId);
    expect(b.current.forecast).toEqual(a.current.forecast);
    expect(b.current.decayRatio).toBe(a.current.decayRatio);
    expect(a.current.modelPoles.length).toBeGreaterThan(0); // a model was learnt (not two empty states)

    for (const [table, cols] of [["samples_1s", SECOND_COLS], ["samples_1m", MINUTE_COLS], ["pole_snapshots", SNAP_COLS]] as const) {
      const ra = await rows(table, fx.a.loopId, cols);
      expect(ra.length, table).toBeGreaterThan(0);
      expect(await rows(table, fx.b.loopId, cols), table).toEqual(ra);
    }
    expect((await rows("samples_1s", fx.b.loopId, "t")).length).toBe(2400);
  });
});

describe("live telemetry during a backfill", () => {
  it("samples arriving live while the file is read follow the backfill into the trained tracker, in order", async () => {
    // A fresh database table state is not needed: loop A's earlier rows lie hours apart from these.
    const clock = new SetClock(NOW);
    const { bus, writer } = setup(clock);
    const l = await loaded(fx.a.loopId);
    const registry = new TrackerRegistry({ bus, clock }, [l.config!]);
    const host = new BackfillHost({ sequelize: db.sequelize, writer, registry, bus, clock, secondRetentionH: 6, minuteRetentionD: 180 });
    const all = simulate(NOW - 12 * 3_600_000, 1500);
    const past = all.slice(0, 1200);
    // the live samples carry on 5 minutes later (the gateway came online after the historian export ended)
    const live = all.slice(1200).map((s) => ({ ...s, t: s.t + 300_000 }));
    let fed = false;
    const res = await host.run({ route: l.route, config: l.config, enabled: true, userId: null, fileName: "past.csv", totalBytes: null, replaceModel: false }, chunks(csvOf(past), 1), () => {
      setTimeout(() => {
        for (const s of live) {
          registry.push(fx.a.loopId, [{ ...s }], s.t); // what the pipeline's sink does first
          host.observeLive(fx.a.loopId, [{ ...s }], s.t);
        }
        fed = true;
      }, 1);
    });
    expect(fed).toBe(true);
    expect(res.trained).toBe(true);
    expect(res.accepted).toBe(1200);
    const tr = registry.get(fx.a.loopId)!;
    expect(tr.current.samples).toBe(1500);
    expect(tr.current.last?.t).toBe(live[live.length - 1]!.t);
  });
});

describe("rejections, overlap, retention, cancel", () => {
  it("counts every rejected sample with its line and refuses what an earlier backfill or live history wrote", async () => {
    const clock = new SetClock(NOW);
    const { bus, writer } = setup(clock);
    const l = await loaded(fx.b.loopId);
    const registry = new TrackerRegistry({ bus, clock }, [l.config!]);
    registry.push(fx.b.loopId, [{ t: NOW - 30_000, sp: 50, pv: 50, mv: 40, mode: "auto" }], NOW - 30_000); // the loop is live already
    const host = new BackfillHost({ sequelize: db.sequelize, writer, registry, bus, clock, secondRetentionH: 6, minuteRetentionD: 180 });
    const params = { route: l.route, config: l.config, enabled: true, userId: null, fileName: "more.csv", totalBytes: null, replaceModel: false };
    const t0 = NOW - 5 * 3_600_000; // before the 40 minutes of the first test
    const iso = (t: number) => new Date(t).toISOString();
    const lines = [
      "T,PV,SP,MV,Mode", // any order and case
      `${iso(t0)},50,50,40,auto`, // line 2 ok
      `yesterday,50,50,40,auto`, // 3 bad time
      `${iso(t0 + 1000)},NaN,50,40,auto`, // 4 non-finite
      `${iso(t0 + 2000)},50,50,40,auto`, // 5 ok
      `${iso(t0 + 1500)},50,50,40,auto`, // 6 out of order
      `${iso(t0 + 2000)},50,50,40,auto`, // 7 duplicate
      `${iso(NOW + 3_600_000)},50,50,40,auto`, // 8 future
      `${iso(t0 + 3000)},,50,40,auto`, // 9 missing PV
      `${iso(t0 + 4000)},50,50,40`, // 10 too few cells
      `${iso(t0 + 5000)},50,50,40,remote`, // 11 bad mode
      `${iso(t0 + 6000)},-9999,50,40,auto`, // 12 accepted as bad quality
      `${iso(NOW - 200 * DAY_MS)},50,50,40,auto`, // 13 beyond the minute retention (and out of order)
      `${iso(NOW - 2 * 3_600_000 + 30_000)},50,50,40,auto`, // 14 inside the first test's backfill of this loop
    ];
    const res = await host.run(params, chunks(lines.join("\n") + "\n"));
    expect(res.status).toBe("done");
    expect(res.accepted).toBe(3);
    expect(res.quality).toEqual({ "fault-value": 1 });
    const byLine = Object.fromEntries(res.firstRejections.map((r) => [r.line, r.reason]));
    expect(byLine).toEqual({ 3: "bad-time", 4: "non-finite", 6: "out-of-order", 7: "duplicate", 8: "future", 9: "missing-value", 10: "bad-row", 11: "bad-shape", 13: "out-of-order", 14: "overlap" });
    expect(res.rejected).toBe(10);
    expect(res.trained).toBe(false); // loop B's tracker has learnt already (first test)
    expect(res.message).toMatch(/history only/);

    // The same file again: every sample refused as overlap, nothing written twice.
    const before = await rows("samples_1s", fx.b.loopId, SECOND_COLS);
    const again = await host.run({ ...params, fileName: "more-again.csv" }, chunks(lines.join("\n") + "\n"));
    expect(again.accepted).toBe(0);
    expect(again.rejections.overlap).toBe(6); // lines 2, 5, 6, 7, 12, 14 (a refused sample sets no order, as live)
    expect(await rows("samples_1s", fx.b.loopId, SECOND_COLS)).toEqual(before);

    // A file reaching past the first backfill's end: the new minutes merge in, the rest is refused.
    const extra = simulate(NOW - 2 * 3_600_000 + 2400_000 - 120_000, 300);
    const merged = await host.run({ ...params, fileName: "extend.csv" }, chunks(csvOf(extra)));
    const firstNew = Math.floor((NOW - 2 * 3_600_000 + 2399_000) / MIN) * MIN + MIN;
    expect(merged.rejections.overlap).toBe(extra.filter((s) => s.t < firstNew).length);
    expect(merged.accepted).toBe(extra.filter((s) => s.t >= firstNew).length);
    const ts = (await rows("samples_1s", fx.b.loopId, "t")).map((r) => Number(r.t));
    expect(new Set(ts).size).toBe(ts.length);
  });

  it("samples older than the per-second retention go to the minute tier only, in a day partition made for them", async () => {
    const clock = new SetClock(NOW);
    const { bus, writer } = setup(clock);
    await maintainHistoryPartitions(db.sequelize, { now: NOW, secondRetentionH: 6, minuteRetentionD: 180 });
    const l = await loaded(fx.a.loopId);
    const registry = new TrackerRegistry({ bus, clock }, [l.config!]);
    const host = new BackfillHost({ sequelize: db.sequelize, writer, registry, bus, clock, secondRetentionH: 6, minuteRetentionD: 180 });
    const old = NOW - 5 * DAY_MS;
    const samples = simulate(Math.floor(old / MIN) * MIN, 600);
    const res = await host.run({ route: l.route, config: l.config, enabled: true, userId: null, fileName: "old.csv", totalBytes: null, replaceModel: false }, chunks(csvOf(samples)));
    expect(res.accepted).toBe(600);
    expect(res.minuteOnly).toBe(600);
    const day = partitionName(old);
    expect((await listPartitions(db.sequelize, "samples_1m")).map((p) => p.name)).toContain(day);
    const inDay = await db.sequelize.query<{ n: number }>(`SELECT COUNT(*) AS n FROM samples_1m PARTITION (${day}) WHERE loop_id = ?`, { replacements: [fx.a.loopId], type: QueryTypes.SELECT });
    expect(Number(inDay[0]!.n)).toBe(10); // 600 s = 10 minutes
    const secs = await db.sequelize.query<{ n: number }>("SELECT COUNT(*) AS n FROM samples_1s WHERE loop_id = ? AND t < ?", { replacements: [fx.a.loopId, NOW - DAY_MS], type: QueryTypes.SELECT });
    expect(Number(secs[0]!.n)).toBe(0);
  });

  it("a cancelled backfill stops, keeps its span (a re-upload merges) and installs no model", async () => {
    const clock = new SetClock(NOW);
    const { bus, writer } = setup(clock);
    const l = await loaded(fx.a.loopId);
    const registry = new TrackerRegistry({ bus, clock }, [l.config!]);
    const fresh = registry.get(fx.a.loopId)!;
    const host = new BackfillHost({ sequelize: db.sequelize, writer, registry, bus, clock, secondRetentionH: 6, minuteRetentionD: 180 });
    const samples = simulate(NOW - 20 * 3_600_000, 20_000);
    let progress: BackfillProgress | null = null;
    const run = host.run({ route: l.route, config: l.config, enabled: true, userId: null, fileName: "big.csv", totalBytes: null, replaceModel: false }, chunks(csvOf(samples), 2), (id) => {
      const poll = setInterval(() => {
        const job = host.get(fx.a.id, id)!;
        progress = job.progress();
        if (progress.accepted > 2000) {
          job.cancel();
          clearInterval(poll);
        }
      }, 2);
    });
    const res = await run;
    expect(progress).not.toBeNull();
    expect(res.status).toBe("cancelled");
    expect(res.accepted).toBeGreaterThan(2000);
    expect(res.accepted).toBeLessThan(20_000);
    expect(registry.get(fx.a.loopId)).toBe(fresh);
    expect(host.get(fx.b.id, res.id)).toBeNull(); // another tenant does not see the job
    const [row] = await db.sequelize.query<{ status: string; from_t: string; to_t: string }>("SELECT status, from_t, to_t FROM history_backfills WHERE id = ?", { replacements: [res.id], type: QueryTypes.SELECT });
    expect(row).toMatchObject({ status: "cancelled" });
    expect(Number(row!.to_t)).toBe(res.toT);
    const again = await host.run({ route: l.route, config: l.config, enabled: true, userId: null, fileName: "big.csv", totalBytes: null, replaceModel: false }, chunks(csvOf(samples)));
    expect(again.accepted + (again.rejections.overlap ?? 0)).toBe(20_000);
    expect(again.accepted).toBeLessThan(20_000 - 2000);
  });
});
