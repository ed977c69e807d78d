/**
 * The rim forecast's drift across a restart (server/tracking/drift-checkpoint.ts, its stored form
 * server/tracking/drift-chunks.ts; docs/architecture.md §6, "Checkpoints"): a tracker restored half
 * way through a seeded drift run from its checkpoint and the drift part (stored through the
 * chunk ledger, a minute apart, a new base each memory) gives the uninterrupted tracker's forecast
 * and holds the very same drift state; a corrupt, version-mismatched or misshapen drift part is
 * refused with a reason and the tracker goes on with the rest of its checkpoint, its forecast
 * from the radius history as without a drift part. The reference is the uninterrupted tracker
 * itself (the property under test is that a restart changes nothing).
 */
import { describe, expect, it } from "vitest";
import { LoopTracker } from "@/server/tracking/loop-tracker";
import { forecastRadiusOne, radiusPoint } from "@/server/tracking/figures";
import { FakeClock } from "./helpers";
import { MemoryDriftStore, driftRun, driftState, feed as feedAll } from "./drift-checkpoint-helpers";

const HALF_S = 4 * 3600;
const { samples, cfg, t0 } = driftRun(5.5 * 3600);
const half = samples.findIndex((s) => s.t > t0 + HALF_S * 1000);
const feed = (tr: LoopTracker, clock: FakeClock, from: number, to: number, everyMinute?: () => void) => feedAll(tr, clock, samples, from, to, everyMinute);
const historyForecast = (tr: LoopTracker) => forecastRadiusOne(tr.checkpoint().radiusHistory.map((p) => radiusPoint(p.t, p.value, p.sd ?? null)), 1000);

/** The uninterrupted tracker at HALF_S with its checkpoint and drift part stored every minute from 3 h. */
function halfWay() {
  const clock = new FakeClock();
  const a = new LoopTracker(cfg, { clock });
  const store = new MemoryDriftStore();
  const from3h = samples.findIndex((s) => s.t > t0 + 3 * 3600 * 1000);
  feed(a, clock, 0, from3h);
  let main = JSON.stringify(a.checkpoint());
  feed(a, clock, from3h, half, () => {
    main = JSON.stringify(a.checkpoint());
    store.save(a);
  });
  main = JSON.stringify(a.checkpoint());
  store.save(a);
  return { a, clock, store, main: JSON.parse(main) as ReturnType<LoopTracker["checkpoint"]> };
}

describe("the drift part of a checkpoint", () => {
  it("restores half way into a fresh tracker that then forecasts as the uninterrupted one", () => {
    const { a, clock, store, main } = halfWay();
    // a minute apart for an hour: bases (a memory = 1000 s apart) and journals between them
    expect(store.saves).toBeGreaterThan(60);
    const b = new LoopTracker(cfg, { clock: new FakeClock(clock.t) });
    expect(b.restore(main)).toEqual({ ok: true });
    expect(b.drift!.restore(store.load())).toBeNull();
    expect(driftState(b)).toEqual(driftState(a));
    const bClock = new FakeClock(clock.t);
    feed(a, clock, half, samples.length);
    feed(b, bClock, half, samples.length);
    const fa = a.current.forecast!.radiusOne!;
    const fb = b.current.forecast!.radiusOne!;
    expect(fa).toBeTruthy();
    // from the drift, not the radius history's trend
    expect(fa).not.toEqual(historyForecast(a));
    for (const k of ["at", "low", "high"] as const) expect(Math.abs(fb[k] - fa[k])).toBeLessThanOrEqual(1e-9 * Math.abs(fa[k] - clock.t));
    expect(fb).toEqual(fa);
    expect(driftState(b)).toEqual(driftState(a));
  }, 120_000);

  it("drops a corrupt, version-mismatched or misshapen drift part with a reason and keeps the rest of the checkpoint", () => {
    const { clock, store, main } = halfWay();
    const restored = (mutate: (s: MemoryDriftStore) => unknown) => {
      const b = new LoopTracker(cfg, { clock: new FakeClock(clock.t) });
      expect(b.restore(main)).toEqual({ ok: true });
      let reason: string | null;
      try {
        reason = b.drift!.restore(mutate(store) as never);
      } catch (e) {
        reason = (e as Error).message;
      }
      return { b, reason };
    };
    const good = store.load();
    // a flipped byte in one chunk: the hash check names it
    const victim = [...store.chunks.keys()][5]!;
    const saved = Buffer.from(store.chunks.get(victim)!);
    store.chunks.get(victim)![100]! ^= 0xff;
    expect(() => store.load()).toThrow(/does not match its hash/);
    store.chunks.set(victim, saved);
    const cases: [string, (s: MemoryDriftStore) => unknown, RegExp][] = [
      ["another format", () => ({ ...good, format: 99 }), /format 99/],
      ["another moment", () => ({ ...good, stamp: good.stamp - 1 }), /estimation sample/],
      ["other options", () => ({ ...good, options: good.options.replace('"windowS":', '"windowS":1') }), /other drift options/],
      ["a missing field", () => ({ ...good, base: Object.fromEntries(Object.entries(good.base!).filter(([k]) => k !== "count")) }), /count: missing/],
      ["an extra field", () => ({ ...good, base: { ...good.base, extra: 1 } }), /extra: not a field/],
      ["a block of another size", () => ({ ...good, base: { ...good.base, fit: { ...(good.base!.fit as object), closed: new Float64Array(3) } } }), /fit\.closed: expected a Float64Array/],
      ["a journal of another width", () => ({ ...good, journal: new Float64Array(good.width + 1) }), /journal of another shape/],
      ["not an object", () => null, /not an object/],
    ];
    for (const [what, mutate, why] of cases) {
      const { b, reason } = restored(mutate);
      expect(reason, what).toMatch(why);
      // the rest of the checkpoint stands and the tracker goes on, its forecast from the radius history
      const bClock = new FakeClock(clock.t);
      feed(b, bClock, half, half + 20);
      expect(b.current.trackerState, what).toBe("tracking");
      expect(b.current.forecast!.radiusOne, what).toEqual(historyForecast(b));
    }
  }, 120_000);

  it("takes a new base once a memory of samples is journalled, and none when the caller has no time for one", () => {
    const clock = new FakeClock();
    const tr = new LoopTracker(cfg, { clock });
    feed(tr, clock, 0, 2000);
    const drift = tr.drift!;
    expect(drift.checkpoint(null, false)).toBeNull();
    const first = drift.checkpoint(null);
    expect(first.base).toBeDefined();
    expect(first.journal).toHaveLength(0);
    // a memory is 200 samples at 5 s (lambda 0.995): 150 later, the journal on that base
    feed(tr, clock, 2000, 2150);
    const mid = drift.checkpoint(first.generation);
    expect([mid.base, mid.generation, mid.journal.length]).toEqual([undefined, first.generation, 150 * first.width]);
    feed(tr, clock, 2150, 2250);
    // due: a new base, unless the caller is out of time (then the journal goes on)
    expect(drift.checkpoint(first.generation, false)!.journal).toHaveLength(250 * first.width);
    const next = drift.checkpoint(first.generation);
    expect(next.base).toBeDefined();
    expect(next.generation).not.toBe(first.generation);
    // a base the caller has not stored: nothing without time for a new one
    expect(drift.checkpoint(first.generation, false)).toBeNull();
  });
});
