/**
 * The diagnosis on simulated loops (tests/assessment/loop-sim.ts; invented data), each over ten
 * seeds: a sticking valve by the two-parameter model of Choudhury, Thornhill & Shah (2005) reads
 * as valve-stiction; an outside sinusoid as external-disturbance, also when it persists through a
 * manual stretch (Hägglund 1995's argument); manual, bad quality, saturation and too little data
 * as such (common practice). Compressed exports withhold the stiction and Harris figures
 * (Thornhill, Choudhury & Shah 2004, from memory).
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig, type AssessSample } from "@/lib/assessment";
import { closedLoopPolynomial, discretePid, spectralRadius } from "@/lib/control";
import { compressEvery, flowLoopJson, simulateLoop, type SimOptions } from "./loop-sim";

const config = (o: Record<string, unknown> = {}) => parseLoopConfig(flowLoopJson("FIC-204", o));

function labels(make: (seed: number) => SimOptions, transform: (s: AssessSample[]) => AssessSample[] = (s) => s, cfg = config()): string[] {
  const out: string[] = [];
  for (let seed = 1; seed <= 10; seed++) out.push(assessLoop(transform(simulateLoop(make(seed))), cfg).diagnosis.label);
  return out;
}

const count = (xs: string[], label: string) => xs.filter((x) => x === label).length;

describe("diagnosis on simulated loops (10 seeds each)", () => {
  it("a sticking valve (S = 4 %, J = 1 %) reads as valve-stiction in at least 8 of 10", () => {
    const got = labels((seed) => ({ seed, n: 6000, kp: 0.5, ti: 15, stiction: { S: 4, J: 1 }, sp0: 52 }));
    expect(count(got, "valve-stiction"), got.join(",")).toBeGreaterThanOrEqual(8);
  });

  it("an outside sinusoid reads as external-disturbance in at least 9 of 10, and never as stiction", () => {
    const got = labels((seed) => ({ seed, n: 6000, kp: 0.5, ti: 15, sine: { amplitude: 2, periodS: 100 + 10 * seed } }));
    expect(count(got, "external-disturbance"), got.join(",")).toBeGreaterThanOrEqual(9);
    expect(count(got, "valve-stiction")).toBe(0);
  });

  it("an oscillation that persists through a manual stretch is from outside (stiction withheld)", () => {
    const samples = simulateLoop({ seed: 3, n: 6000, kp: 0.5, ti: 15, sine: { amplitude: 2, periodS: 150 }, manual: [[2000, 3000]] });
    const r = assessLoop(samples, config());
    expect(r.details.oscillationInManual).toBe(true);
    expect(r.diagnosis.label).toBe("external-disturbance");
    expect(r.stiction.verdict).toBe("unlikely");
  });

  // The simulated plant: K = 1, τ = 20 s, dead time 2 s plus the hold's sample (3.5 s effective).
  // SIMC (Skogestad, J. Process Control 13, 2003) with τc = θ: kp = τ/(K(τc + θ)) ≈ 2.9, Ti = τ.
  it.each([
    { name: "a loop tuned by SIMC reports no oscillation and reads healthy in at least 8 of 10", kp: 2.9, ti: 20, label: "healthy" },
    { name: "a gain 20 times below SIMC with a slow integral reads sluggish-tuning in at least 8 of 10, without oscillation", kp: 0.15, ti: 100, label: "sluggish-tuning" },
  ])("$name", ({ kp, ti, label }) => {
    const got: string[] = [];
    for (let seed = 1; seed <= 10; seed++) {
      const r = assessLoop(simulateLoop({ seed, n: 6000, kp, ti }), config({ deadTimeS: 3, controller: { kp, ti, mvLo: 0, mvHi: 100 } }));
      expect(r.oscillation.detected).toBe(false);
      got.push(r.diagnosis.label);
    }
    expect(count(got, label), got.join(",")).toBeGreaterThanOrEqual(8);
  });

  it("a gain twice SIMC's with a short integral time reads aggressive-tuning in at least 9 of 10", () => {
    const got = labels((seed) => ({ seed, n: 6000, kp: 5.5, ti: 10 }), undefined, config({ deadTimeS: 3, controller: { kp: 5.5, ti: 10, mvLo: 0, mvHi: 100 } }));
    expect(count(got, "aggressive-tuning"), got.join(",")).toBeGreaterThanOrEqual(9);
  });

  it("manual most of the time reads manual, with the service factor", () => {
    const r = assessLoop(simulateLoop({ seed: 1, n: 4000, kp: 0.5, ti: 15, manual: [[500, 3500]] }), config());
    expect(r.diagnosis.label).toBe("manual");
    expect(r.manual).toBeCloseTo(0.75, 2);
    expect(r.serviceFactor).toBeCloseTo(0.25, 2);
  });

  it("without a mode column, an output held exactly while PV moves reads manual; a quantised output in auto does not", () => {
    const cfg = config({ deadTimeS: 3, controller: { kp: 2.9, ti: 20, mvLo: 0, mvHi: 100 } });
    const held = simulateLoop({ seed: 1, n: 6000, kp: 2.9, ti: 20, manual: [[1000, 5000]] }).map(({ mode: _mode, ...x }) => x);
    expect(assessLoop(held, cfg).diagnosis.label).toBe("manual");
    const quantised = simulateLoop({ seed: 1, n: 6000, kp: 2.9, ti: 20 }).map(({ mode: _mode, ...x }) => ({ ...x, mv: Math.round(x.mv * 10) / 10 }));
    expect(assessLoop(quantised, cfg).diagnosis.label).not.toBe("manual");
  });

  it("bad quality on a tenth of the samples reads sensor-fault", () => {
    const r = assessLoop(
      simulateLoop({ seed: 1, n: 4000, kp: 0.5, ti: 15 }).map((s, i) => (i % 10 === 0 ? { ...s, pv: NaN, quality: "bad" as const } : { ...s, quality: "good" as const })),
      config(),
    );
    expect(r.diagnosis.label).toBe("sensor-fault");
  });

  it("a frozen PV while the output moves reads sensor-fault", () => {
    const r = assessLoop(
      simulateLoop({ seed: 2, n: 4000, kp: 0.5, ti: 15 }).map((s, i) => (i >= 2000 && i < 2600 ? { ...s, pv: 49.5, mv: 50 + (i - 2000) * 0.02 } : s)),
      config(),
    );
    expect(r.diagnosis.label).toBe("sensor-fault");
  });

  // NAMUR NE 43 (from memory): a 4–20 mA transmitter measures within 3.8–20.5 mA (−1.25 % to
  // +103.125 % of span); beyond that is a failure signal, so the output that winds to its limit
  // behind a reading pinned there is a consequence, not a saturated loop.
  it("a PV pinned past the NE 43 measurement limit with the output wound to its limit reads sensor-fault, not saturated", () => {
    const r = assessLoop(
      simulateLoop({ seed: 3, n: 4000, kp: 0.5, ti: 15 }).map((s, i) => (i >= 2000 ? { ...s, pv: 105, mv: 0 } : s)),
      config(),
    );
    expect(r.saturation).toBeGreaterThan(0.2);
    expect(r.diagnosis.label).toBe("sensor-fault");
  });

  it("a PV at the range end but within the NE 43 measurement limit, output at its limit, still reads saturated", () => {
    const r = assessLoop(
      simulateLoop({ seed: 3, n: 4000, kp: 0.5, ti: 15 }).map((s, i) => (i >= 2000 ? { ...s, pv: 101 + 0.5 * Math.sin(i / 7), mv: 0 } : s)),
      config(),
    );
    expect(r.diagnosis.label).toBe("saturated");
  });

  it("a gap in the export is a caution, not a sensor fault", () => {
    const cfg = config({ deadTimeS: 3, controller: { kp: 2.9, ti: 20, mvLo: 0, mvHi: 100 } });
    const s = simulateLoop({ seed: 1, n: 8000, kp: 2.9, ti: 20 }).map((x, i) => ({ ...x, t: i < 4000 ? x.t : x.t + 20_000 }));
    const r = assessLoop(s, cfg);
    expect(r.diagnosis.label).not.toBe("sensor-fault");
    expect(r.details.badQuality).toBe(0);
    expect(r.cautions.join(" ")).toMatch(/gaps/);
  });

  it("an output pinned at its limit reads saturated", () => {
    const r = assessLoop(simulateLoop({ seed: 1, n: 4000, kp: 0.5, ti: 15, sp0: 50, mvHi: 55, spSteps: [{ at: 1000, sp: 70 }] }), config({ controller: { kp: 0.5, ti: 15, mvLo: 0, mvHi: 55 } }));
    expect(r.saturation).toBeGreaterThan(0.5);
    expect(r.diagnosis.label).toBe("saturated");
  });

  // Common practice (no source): a load beyond the output's range pins it at one limit for long
  // spells; an output banged from stop to stop by a far too high gain is a tuning fault.
  it("an output driven from limit to limit by a far too high gain is not read as saturated", () => {
    const got = labels(
      (seed) => ({ seed, n: 4000, kp: 60, ti: 15, noise: 0.3, mvLo: 40, mvHi: 60, mv0: 50, sp0: 50 }),
      (s) => s,
      config({ controller: { kp: 60, ti: 15, td: 0, action: "reverse", mvLo: 40, mvHi: 60 } }),
    );
    expect(count(got, "saturated"), got.join(",")).toBe(0);
    expect(count(got, "aggressive-tuning"), got.join(",")).toBeGreaterThanOrEqual(8);
  });

  it("too little data for a slow loop is undetermined with the time still needed", () => {
    const cfg = config({ deadTimeS: 30, controller: { kp: 0.5, ti: 300, mvLo: 0, mvHi: 100 } });
    const r = assessLoop(simulateLoop({ seed: 1, n: 600, kp: 0.5, ti: 300, tauS: 300, deadS: 30 }), cfg);
    expect(r.diagnosis.label).toBe("undetermined");
    expect(r.diagnosis.needsS).toBeGreaterThan(1000);
    expect(r.diagnosis.reason).toMatch(/too little data/);
  });

  it("compressed data (stored points joined by straight lines) withhold stiction and Harris figures", () => {
    // Keep every 15th point (a historian's dead-band storage, roughly) and replay by linear
    // interpolation at 1 s, as an export of compressed data does.
    const compress = (s: AssessSample[]) => compressEvery(s, 15);
    const r = assessLoop(compress(simulateLoop({ seed: 1, n: 6000, kp: 0.5, ti: 15, stiction: { S: 4, J: 1 }, sp0: 52 })), config());
    expect(r.details.compression.compressed).toBe(true);
    expect(r.harrisIndex).toBeNull();
    expect(r.stiction.verdict).not.toBe("likely");
    expect(r.cautions.join(" ")).toMatch(/compressed/);
  });

  it("the same samples give the same assessment (pure function: live and offline agree)", () => {
    const s = simulateLoop({ seed: 9, n: 3000, kp: 0.5, ti: 15, stiction: { S: 4, J: 1 }, sp0: 52 });
    expect(JSON.stringify(assessLoop(s, config()))).toBe(JSON.stringify(assessLoop(s.map((x) => ({ ...x })), config())));
  });

  it("with set-point moves, the oscillation's period is cross-checked against the own dominant pole's 2πT/|arg z|", () => {
    const cfg = config({ deadTimeS: 3, controller: { kp: 6.5, ti: 8, mvLo: 0, mvHi: 100 } });
    const steps = Array.from({ length: 8 }, (_, i) => ({ at: 500 + i * 600, sp: i % 2 ? 50 : 56 }));
    const own = assessLoop(simulateLoop({ seed: 2, n: 5500, kp: 6.5, ti: 8, spSteps: steps }), cfg);
    expect(own.oscillation.detected).toBe(true);
    expect(Math.abs(own.details.ownModePeriodS! / own.oscillation.periodS! - 1)).toBeLessThan(0.05);
    expect(own.cautions.join(" ")).toMatch(/matches the loop's own dominant mode/);
  });

  it("set-point moves identify the loop's own poles; routine data at a constant set point do not", () => {
    const steps = Array.from({ length: 8 }, (_, i) => ({ at: 500 + i * 600, sp: i % 2 ? 50 : 56 }));
    const moved = assessLoop(simulateLoop({ seed: 4, n: 5500, kp: 0.5, ti: 15, spSteps: steps, loadSigma: 0.01 }), config());
    expect(moved.poles.length).toBeGreaterThan(0);
    // The true closed loop: the simulator's exact ZOH plant (a = e^{-1/20}, b = 1 - a, four
    // samples of delay) with the same PI, by lib/control (itself checked against scipy).
    const a = Math.exp(-1 / 20);
    const truth = spectralRadius(closedLoopPolynomial({ a: [-a], b: [1 - a], nk: 4, T: 1 }, discretePid({ kp: 0.5, ti: 15, T: 1 })));
    expect(Math.abs(moved.spectralRadius! - truth)).toBeLessThan(0.01);
    const flat = assessLoop(simulateLoop({ seed: 4, n: 5500, kp: 0.5, ti: 15 }), config());
    expect(flat.poles).toEqual([]);
    expect(flat.spectralRadius).toBeNull();
    expect(flat.disturbanceResponse).not.toBeNull();
  });
});
