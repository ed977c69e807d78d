import path from "node:path";
import { describe, expect, it } from "vitest";
import type { LoopStateDto, SampleDto } from "@/lib/domain/types";
import { Bus } from "@/server/context";
import { LoopTracker } from "@/server/tracking/loop-tracker";
import { TrackerRegistry } from "@/server/tracking/registry";
import { buildFleet } from "@/simulators/fleet";
import type { LoopSim } from "@/simulators/loop-sim";
import { loadScenario } from "@/simulators/scenario";
import { allNumbers, FakeClock, trackerConfigFor } from "./helpers";
import { testLoopConfig } from "@/tests/helpers/loop-config";

const scenarioDir = path.join(import.meta.dirname, "../../simulators/scenarios");

async function scenarioSim(name: string): Promise<LoopSim> {
  const sc = await loadScenario(path.join(scenarioDir, `${name}.json`));
  const [sim] = buildFleet({ scenario: sc, seed: sc.seed ?? 1 });
  return sim!;
}

/** Drive a tracker with `n` samples of `sim`, one per telemetry period of the fake clock. */
function drive(tracker: LoopTracker, sim: LoopSim, clock: FakeClock, n: number): LoopStateDto[] {
  const out: LoopStateDto[] = [];
  const dt = sim.config.telemetryPeriodS * 1000;
  let produced = 0;
  while (produced < n) {
    const s = sim.step();
    if (!s) continue;
    produced++;
    clock.advance(dt);
    const st = tracker.push([{ t: clock.now(), sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode }], clock.now());
    if (st) out.push(st);
  }
  return out;
}

function expectFiniteOrNull(state: LoopStateDto): void {
  for (const v of allNumbers(state)) expect(Number.isFinite(v)).toBe(true);
}

describe("tracker states", () => {
  it("starts learning, then tracks a loop with set-point moves", async () => {
    const sim = await scenarioSim("gain-creep");
    const clock = new FakeClock();
    const tr = new LoopTracker(trackerConfigFor(sim), { clock });
    expect(tr.current.trackerState).toBe("learning");
    expect(tr.current.stateReason).toBe("waiting for telemetry");
    const states = drive(tr, sim, clock, 500);
    expect(states[0]!.trackerState).toBe("learning");
    expect(states.at(-1)!.trackerState).toBe("tracking");
    expect(states.at(-1)!.spectralRadius).not.toBeNull();
    expect(states.at(-1)!.juryStable).toBe(true);
  });

  it("reports manual while the operator has the loop, with a reason", async () => {
    const sim = await scenarioSim("manual-switch"); // manual from 300 s on
    const clock = new FakeClock();
    const start = clock.now();
    const tr = new LoopTracker(trackerConfigFor(sim), { clock });
    const states = drive(tr, sim, clock, 600);
    const beforeSwitch = states.filter((s) => s.last!.t <= start + 300_000);
    expect(beforeSwitch.length).toBeGreaterThan(200);
    expect(beforeSwitch.some((s) => s.trackerState === "manual")).toBe(false);
    expect(states.at(-1)!.trackerState).toBe("manual");
    expect(states.at(-1)!.stateReason).toMatch(/manual/);
  });

  it("goes stale on a frozen transmitter (flat-lined PV)", async () => {
    const sim = await scenarioSim("frozen-sensor"); // frozen from 300 s, 0.2 s samples
    const clock = new FakeClock();
    const tr = new LoopTracker(trackerConfigFor(sim), { clock });
    drive(tr, sim, clock, 1400);
    expect(tr.current.trackerState).not.toBe("stale");
    drive(tr, sim, clock, 1000);
    expect(tr.current.trackerState).toBe("stale");
    expect(tr.current.stateReason).toMatch(/flat/);
  });

  it("a PV held at its range end is the process past the transmitter's range, not a frozen transmitter; manual says so first", () => {
    // an integrating level left in manual runs to the end of its range and the transmitter's
    // reading stops there (simulators/loop-sim.ts, TRANSMITTER_RANGE_PCT): a flat PV, but no fault
    const clock = new FakeClock();
    const cfg = testLoopConfig({ pvLo: 0, pvHi: 100, telemetryPeriodS: 1 });
    const feed = (tr: LoopTracker, n: number, pv: (k: number) => number, mode: "auto" | "manual") => {
      for (let k = 0; k < n; k++) {
        clock.advance(1000);
        tr.push([{ t: clock.now(), sp: 50, pv: pv(k), mv: 40, mode }], clock.now());
      }
    };
    const noisy = (k: number) => 50 + Math.sin(k * 1.7) * 0.3;
    const inManual = new LoopTracker(cfg, { clock });
    feed(inManual, 200, noisy, "auto");
    feed(inManual, 400, () => 103.125, "manual");
    expect(inManual.current.trackerState).toBe("manual");
    const inAuto = new LoopTracker(cfg, { clock });
    feed(inAuto, 200, noisy, "auto");
    feed(inAuto, 400, () => 103.125, "auto");
    expect(inAuto.current.trackerState).toBe("stale");
    expect(inAuto.current.stateReason).toMatch(/beyond the transmitter's range/);
    // the same flat run inside the range is still a frozen transmitter, in manual too
    const frozen = new LoopTracker(cfg, { clock });
    feed(frozen, 200, noisy, "auto");
    feed(frozen, 400, () => 61.5, "manual");
    expect(frozen.current.trackerState).toBe("stale");
    expect(frozen.current.stateReason).toMatch(/frozen transmitter/);
  });

  it("reports saturated while the MV is pinned at a limit", async () => {
    const sim = await scenarioSim("saturation"); // load step at 300 s drives the MV to 95 %
    const clock = new FakeClock();
    const tr = new LoopTracker(trackerConfigFor(sim), { clock });
    drive(tr, sim, clock, 290);
    expect(tr.current.trackerState).not.toBe("saturated");
    drive(tr, sim, clock, 300);
    expect(tr.current.trackerState).toBe("saturated");
    expect(tr.current.stateReason).toMatch(/high limit/);
  });

  it("goes stale after three silent periods and recovers on the next sample (registry timer)", async () => {
    const sim = await scenarioSim("gain-creep");
    const clock = new FakeClock();
    const bus = new Bus();
    const seen: LoopStateDto[] = [];
    bus.on("tracker:update", (s) => seen.push(s));
    const reg = new TrackerRegistry({ bus, clock }, [trackerConfigFor(sim, 7)]);
    for (let i = 0; i < 300; i++) {
      const s = sim.samples(1)[0]!;
      clock.advance(1000);
      reg.push(7, [{ t: clock.now(), sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode }], clock.now());
    }
    const before = seen.length;
    clock.advance(2500);
    reg.tick(clock.now());
    expect(seen.length).toBe(before); // 2.5 periods: not yet
    clock.advance(1000);
    reg.tick(clock.now());
    expect(seen.length).toBe(before + 1);
    expect(seen.at(-1)!.trackerState).toBe("stale");
    expect(seen.at(-1)!.stateReason).toMatch(/no sample for 3\.5 s/);
    const s = sim.samples(1)[0]!;
    reg.push(7, [{ t: clock.now(), sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode }], clock.now());
    expect(reg.get(7)!.current.trackerState).not.toBe("stale");
  });
});

describe("staleness with batched delivery", () => {
  it("counts silence in delivery periods: 10-sample batches of a 10 Hz loop every second are not stale", async () => {
    const sim = await scenarioSim("frozen-sensor"); // 0.2 s samples; frozen only from 300 s
    const clock = new FakeClock();
    const bus = new Bus();
    const seen: LoopStateDto[] = [];
    bus.on("tracker:update", (s) => seen.push(s));
    const reg = new TrackerRegistry({ bus, clock }, [trackerConfigFor(sim, 4)]);
    let start = clock.now();
    for (let i = 0; i < 100; i++) {
      const batch = sim.samples(10).map((s, j) => ({ t: start + j * 200, sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode }));
      clock.t = start + 2000; // the batch arrives when its 2 s are over
      reg.push(4, batch, clock.now());
      clock.t = start + 3500; // 1.5 s after it: the next batch is due at start + 4000
      reg.tick(clock.now());
      start += 2000;
    }
    expect(seen.some((s) => s.trackerState === "stale")).toBe(false);
    clock.t = start + 3 * 2000 + 100; // last arrival at start, three delivery periods later
    reg.tick(clock.now());
    expect(reg.get(4)!.current.trackerState).toBe("stale");
  });
});

describe("hostile but valid telemetry", () => {
  const cfg = testLoopConfig({ id: 3, tag: "FIC-3" });
  const streams: Record<string, (k: number) => Omit<SampleDto, "t">> = {
    constant: () => ({ sp: 50, pv: 50, mv: 50, mode: "auto" }),
    "huge values": (k) => ({ sp: 1e300, pv: k % 2 ? 1e300 : -1e300, mv: k % 3 ? 1e250 : -1e250, mode: "auto" }),
    "tiny values": (k) => ({ sp: 0, pv: 1e-300 * (k % 5), mv: 5e-324 * (k % 7), mode: "auto" }),
    "alternating extremes": (k) => ({ sp: 50, pv: k % 2 ? 1e12 : -1e12, mv: k % 2 ? -1e12 : 1e12, mode: k % 50 < 25 ? "auto" : "cascade" }),
    "steps every sample": (k) => ({ sp: (k * 37) % 100, pv: (k * 53) % 100, mv: (k * 71) % 100, mode: "auto" }),
    "collinear ramp": (k) => ({ sp: k, pv: k, mv: k, mode: "auto" }),
    "mode flapping": (k) => ({ sp: 40, pv: 40 + Math.sin(k), mv: 50 + Math.cos(k / 3), mode: k % 2 ? "manual" : "auto" }),
  };
  for (const [name, gen] of Object.entries(streams)) {
    it(`keeps every number finite or null: ${name}`, () => {
      const clock = new FakeClock();
      const tr = new LoopTracker(cfg, { clock });
      let computed = 0;
      for (let k = 0; k < 1500; k++) {
        clock.advance(1000);
        const st = tr.push([{ t: clock.now(), ...gen(k) }], clock.now());
        if (st) {
          computed++;
          expectFiniteOrNull(st);
        }
      }
      expect(computed).toBeGreaterThan(1000);
      expectFiniteOrNull(tr.current);
      expect(JSON.parse(JSON.stringify(tr.checkpoint()))).toBeTruthy();
    });
  }

  it("skips out-of-order and non-finite samples without losing the state", () => {
    const clock = new FakeClock();
    const tr = new LoopTracker(cfg, { clock });
    tr.push([{ t: 2000, sp: 1, pv: 1, mv: 1, mode: "auto" }], 2000);
    tr.push([{ t: 1000, sp: 1, pv: 2, mv: 1, mode: "auto" }, { t: 3000, sp: NaN, pv: 1, mv: 1, mode: "auto" }], 3000);
    expect(tr.outOfOrder).toBe(2);
    expect(tr.current.last?.t).toBe(2000);
  });
});

describe("checkpoints and configuration changes", () => {
  it("resumes from a JSON checkpoint exactly where it left off", async () => {
    const simA = await scenarioSim("gain-creep");
    const simB = await scenarioSim("gain-creep");
    const clockA = new FakeClock();
    const clockB = new FakeClock();
    const a = new LoopTracker(trackerConfigFor(simA), { clock: clockA });
    const b = new LoopTracker(trackerConfigFor(simB), { clock: clockB });
    drive(a, simA, clockA, 800);
    simB.samples(800);
    clockB.advance(800_000);
    const cp = JSON.parse(JSON.stringify(a.checkpoint())) as ReturnType<LoopTracker["checkpoint"]>;
    expect(b.restore(cp)).toEqual({ ok: true });
    const sa = drive(a, simA, clockA, 50).at(-1)!;
    const sb = drive(b, simB, clockB, 50).at(-1)!;
    expect(sb.modelPoles).toEqual(sa.modelPoles);
    expect(sb.spectralRadius).toBe(sa.spectralRadius);
    expect(sb.trackerState).toBe(sa.trackerState);
  });

  it("keeps 'no set-point move seen yet' through a checkpoint (JSON has no -Infinity)", async () => {
    // the simulated loop's telemetry with its set point held constant: no move before the checkpoint
    const sim = await scenarioSim("gain-creep");
    const clock = new FakeClock();
    const cfg = trackerConfigFor(sim);
    const a = new LoopTracker(cfg, { clock });
    const b = new LoopTracker(cfg, { clock });
    const dt = sim.config.telemetryPeriodS * 1000;
    let sp: number | null = null;
    const next = () => {
      for (;;) {
        const s = sim.step();
        if (!s) continue;
        sp ??= s.sp;
        clock.advance(dt);
        return [{ t: clock.now(), sp, pv: s.pv, mv: s.mv, mode: s.mode }];
      }
    };
    for (let k = 0; k < 200; k++) a.push(next(), clock.now());
    expect(a.current.stateReason).toMatch(/no set-point move seen yet/);
    expect(b.restore(JSON.parse(JSON.stringify(a.checkpoint())) as ReturnType<LoopTracker["checkpoint"]>)).toEqual({ ok: true });
    const batch = next();
    a.push(batch, clock.now());
    b.push(batch, clock.now());
    expect(b.current.stateReason).toMatch(/no set-point move seen yet/);
    expect(b.current.stateReason).toBe(a.current.stateReason);
  });

  it("refuses a checkpoint of another loop or another structure, and keeps learning", async () => {
    const sim = await scenarioSim("gain-creep");
    const clock = new FakeClock();
    const a = new LoopTracker(trackerConfigFor(sim, 1), { clock });
    drive(a, sim, clock, 100);
    const other = new LoopTracker(trackerConfigFor(sim, 2), { clock });
    expect(other.restore(a.checkpoint())).toMatchObject({ ok: false });
    const wider = new LoopTracker(trackerConfigFor(sim, 1, { na: 2 }), { clock });
    expect(wider.restore(a.checkpoint())).toMatchObject({ ok: false, reason: expect.stringMatching(/structure/) });
    expect(wider.restore({ version: 9 } as never)).toMatchObject({ ok: false });
  });

  it("keeps the plant model when only the tuning changes, relearns when the structure does", async () => {
    const sim = await scenarioSim("gain-creep");
    const clock = new FakeClock();
    const bus = new Bus();
    const cfg = trackerConfigFor(sim, 5);
    const reg = new TrackerRegistry({ bus, clock }, [cfg]);
    for (const s of sim.samples(600)) {
      clock.advance(1000);
      reg.push(5, [{ t: clock.now(), sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode }], clock.now());
    }
    const updates = reg.get(5)!.plantUpdates;
    expect(updates).toBeGreaterThan(50);
    expect(reg.upsertLoop({ ...cfg, controller: { ...cfg.controller, kp: cfg.controller.kp * 2 } })).toBe("kept");
    expect(reg.get(5)!.plantUpdates).toBe(updates);
    expect(reg.upsertLoop({ ...cfg, nb: cfg.nb + 1 })).toBe("relearn");
    expect(reg.get(5)!.plantUpdates).toBe(0);
    expect(reg.upsertLoop({ ...cfg, pvHi: cfg.pvLo })).toBe("rejected");
    expect(reg.rejected.get(5)).toMatch(/pvHi/);
    reg.push(99, [{ t: 1, sp: 1, pv: 1, mv: 1, mode: "auto" }], 1);
    expect(reg.unknownLoopSamples).toBe(1);
    expect(reg.removeLoop(5)).toBe(true);
    expect(reg.states()).toEqual([]);
  });
});
