import { describe, expect, it } from "vitest";
import { LoopSim } from "@/simulators/loop-sim";
import { SimulatorRunner } from "@/simulators/runner";
import { loopConfig } from "./helpers";

/** A fleet of `n` 10 Hz loops run for `wallMs` at 50 ms ticks on a fake clock; every message kept. */
function run(n: number, batchSize: number, wallMs: number, stamp: "simulated" | "publish") {
  let now = 1_767_600_000_000;
  const sims = Array.from({ length: n }, (_, i) => new LoopSim(loopConfig({ tag: `FIC-${100 + i}`, telemetryPeriodS: 0.1, controllerPeriodS: 0.1, seed: 7 + i })));
  const messages: { topic: string; payload: string; at: number }[] = [];
  const runner = new SimulatorRunner({ sims, publish: (topic, payload) => void messages.push({ topic, payload, at: now }), clock: { now: () => now }, batchSize, maxBatchDelayMs: 10_000, stamp });
  for (let t = 0; t <= wallMs; t += 50) {
    runner.tick();
    now += 50;
  }
  runner.flush();
  return { runner, messages };
}

describe("simulator runner, load mode", () => {
  it("writes message text identical to JSON.stringify of the parsed samples (keys t, sp, pv, mv, mode in that order)", () => {
    for (const stamp of ["simulated", "publish"] as const) {
      const { messages, runner } = run(3, 7, 5_000, stamp);
      expect(messages.length).toBeGreaterThan(10);
      let samples = 0;
      for (const m of messages) {
        const parsed = JSON.parse(m.payload) as { t: number; sp: number; pv: number; mv: number; mode: string }[];
        expect(Array.isArray(parsed)).toBe(true);
        expect(m.payload).toBe(JSON.stringify(parsed.map((s) => ({ t: s.t, sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode }))));
        samples += parsed.length;
      }
      expect(samples).toBe(runner.samples);
    }
    const single = run(1, 1, 1_000, "simulated").messages;
    expect(single.length).toBeGreaterThan(5);
    for (const m of single) expect(m.payload).toBe(JSON.stringify(JSON.parse(m.payload)));
  });

  it("staggers the lanes: first messages carry 1..batchSize samples, then full batches, so flushes spread over the batch period", () => {
    const { messages } = run(20, 10, 3_000, "publish");
    const firstByTopic = new Map<string, number>();
    const sizesAfterFirst = new Set<number>();
    const atCounts = new Map<number, number>();
    for (const m of messages) {
      const size = (JSON.parse(m.payload) as unknown[]).length;
      if (!firstByTopic.has(m.topic)) firstByTopic.set(m.topic, size);
      else if (m.at < 1_767_600_000_000 + 3_000) sizesAfterFirst.add(size);
      if (m.at <= 1_767_600_000_000 + 3_000) atCounts.set(m.at, (atCounts.get(m.at) ?? 0) + 1); // not the final flush()
    }
    expect(new Set(firstByTopic.values())).toEqual(new Set([1, 2, 3, 4, 5, 6, 7, 8, 9, 10]));
    expect(sizesAfterFirst).toEqual(new Set([10]));
    // 20 lanes in step without staggering would send all 20 messages in one tick
    expect(Math.max(...atCounts.values())).toBeLessThanOrEqual(4);
  });

  it("publish stamps: the last sample of a message carries the publish ms, none is later, strictly increasing per loop", () => {
    const { messages } = run(5, 20, 6_000, "publish");
    const lastT = new Map<string, number>();
    let checked = 0;
    for (const m of messages) {
      const ts = (JSON.parse(m.payload) as { t: number }[]).map((s) => s.t);
      expect(ts.at(-1)).toBe(m.at);
      for (const t of ts) {
        expect(t).toBeLessThanOrEqual(m.at);
        expect(t).toBeGreaterThan(lastT.get(m.topic) ?? 0);
        lastT.set(m.topic, t);
        checked++;
      }
    }
    expect(checked).toBe(300); // 5 loops x 10 Hz x 6 s
  });
});
