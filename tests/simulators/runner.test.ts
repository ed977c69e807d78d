import { describe, expect, it } from "vitest";
import { decodePayload, parseTelemetryTopic, validateSample } from "@/lib/domain/telemetry";
import { LoopSim } from "@/simulators/loop-sim";
import { SimulatorRunner } from "@/simulators/runner";
import { loopConfig } from "./helpers";

function collect(batchSize: number, speedup: number, wallMs: number) {
  let now = 1_767_600_000_000;
  const sims = [new LoopSim(loopConfig({ tag: "FIC-1", telemetryPeriodS: 0.1, controllerPeriodS: 0.1 })), new LoopSim(loopConfig({ tag: "TIC-2", telemetryPeriodS: 2, controllerPeriodS: 1 }))];
  const messages: { topic: string; payload: string; at: number }[] = [];
  const runner = new SimulatorRunner({ sims, publish: (topic, payload) => void messages.push({ topic, payload, at: now }), clock: { now: () => now }, speedup, batchSize, maxBatchDelayMs: 200 });
  for (let t = 0; t <= wallMs; t += 50) {
    runner.tick();
    now += 50;
  }
  runner.flush();
  return { runner, messages, sims };
}

describe("simulator runner", () => {
  it("publishes contract-valid batches of at most batchSize samples, timestamps strictly increasing per loop", () => {
    const { runner, messages } = collect(25, 10, 20_000);
    const lastT = new Map<string, number>();
    let samples = 0;
    for (const m of messages) {
      expect(parseTelemetryTopic(m.topic)).not.toBeNull();
      const d = decodePayload(m.payload);
      expect(d.ok).toBe(true);
      if (!d.ok) continue;
      expect(d.items.length).toBeLessThanOrEqual(25);
      for (const item of d.items) {
        const v = validateSample(item);
        expect(v.ok).toBe(true);
        if (!v.ok) continue;
        expect(v.sample.t).toBeGreaterThan(lastT.get(m.topic) ?? 0);
        expect(v.sample.t).toBeLessThanOrEqual(m.at); // never ahead of the clock at this rate
        lastT.set(m.topic, v.sample.t);
        samples++;
      }
    }
    expect(samples).toBe(runner.samples);
    expect(runner.dropped).toBe(0);
    // 20 s of wall time at 10x: simulated [0, 200) s -> 2000 samples of the 10 Hz loop, 100 of the 0.5 Hz loop
    expect(samples).toBe(2000 + 100);
    expect(new Set(messages.map((m) => m.topic))).toEqual(new Set(["rg/tenant-a/site-1/fic-1/samples", "rg/tenant-a/site-1/tic-2/samples"]));
  });

  it("sends bare objects at batch size 1 and refuses a batch size beyond the contract's 500", () => {
    const { messages } = collect(1, 1, 2_000);
    expect(messages.length).toBeGreaterThan(10);
    expect(messages.every((m) => m.payload.startsWith("{"))).toBe(true);
    expect(() => new SimulatorRunner({ sims: [], publish: () => undefined, batchSize: 501 })).toThrow(/1\.\.500/);
  });
});
