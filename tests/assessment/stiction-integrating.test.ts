/**
 * Stiction on integrating (level) loops, over 20 seeds each, on loops of tests/assessment/loop-sim.ts
 * (invented data). The sticking valve is the two-parameter model of Choudhury, Thornhill & Shah
 * (Control Eng. Practice 13, 2005), in loop-sim's own simplified implementation, so the assessment
 * is not checked against its own valve code. The tuning is SIMC's for an integrating process
 * (Skogestad, J. Process Control 13, 2003, from memory: Kc = 1/(k'(τc + θ)), Ti = 4(τc + θ)) with
 * k' = 1/200 per s, θ = 2 s and τc = 20 s: Kc ≈ 9.1, Ti ≈ 88 s.
 *
 * What is checked (thresholds ours, counts seen in brackets):
 * - the coarse model fit for integrating loops (stiction-integrating.ts: Jelali 2008's Hammerstein
 *   fit on 12 blocks per cycle, where a level's ramps between slips outgrow white measurement
 *   noise, after Horch 2000's argument for integrating processes) finds such a valve where the
 *   usual fit on 24 blocks per cycle does not, and the whole assessment then reads
 *   `valve-stiction` far more often than with the usual fit alone; where the error neither
 *   oscillates nor rings (a level's stick-slip ramps vary in length with the loads, so the cycle
 *   has no dominant period) the coarse fit over a twelfth of the integral time decides;
 * - the same level loop with a linear valve, with more noise and larger loads, tuned aggressively,
 *   or under an outside sinusoid, is never called sticky.
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig } from "@/lib/assessment";
import { fitStictionModel, readStictionFit } from "@/lib/assessment/stiction-fit";
import { coarseLevelFit, outputCycleAmplitude } from "@/lib/assessment/stiction-integrating";
import { Prng } from "@/simulators/prng";
import { flowLoopJson, simulateLoop, type SimOptions } from "./loop-sim";

const SEEDS = Array.from({ length: 20 }, (_, i) => i + 1);
/** A level loop under SIMC tuning (see above). */
const level = (seed: number): SimOptions => ({ seed, n: 10000, kp: 9, ti: 88, integrating: true, tauS: 200, sp0: 50 });

function assessLevel(o: SimOptions) {
  const s = simulateLoop(o);
  const report = assessLoop(s, parseLoopConfig(flowLoopJson("LIC-4711", { kind: "level" }, { kp: o.kp, ti: o.ti })));
  return { s, report };
}

function verdicts(make: (seed: number) => SimOptions): string[] {
  return SEEDS.map((seed) => assessLevel(make(seed)).report.diagnosis.label);
}

const count = (xs: string[], label: string) => xs.filter((x) => x === label).length;

describe("stiction on integrating (level) loops (20 seeds each)", () => {
  it("the cycle amplitude of the output: a triangular wave of amplitude 4 % plus white noise reads 4 % within 5 % (a triangle's sd is its amplitude over √3; common practice)", () => {
    const rng = new Prng(7);
    const mv = Float64Array.from({ length: 20000 }, (_, i) => {
      const ph = (i % 100) / 100;
      return 50 + 4 * (ph < 0.5 ? 4 * ph - 1 : 3 - 4 * ph) + 0.5 * rng.normal();
    });
    expect(outputCycleAmplitude(mv)).toBeGreaterThan(3.8);
    expect(outputCycleAmplitude(mv)).toBeLessThan(4.2);
  });

  it("a sticking valve (S 3 %, J 1.5 % of output; PV noise 0.05 %, so the controller's output jitters by about a fifth of the band (9 × 0.05 × √2 ≈ 0.64 %) and the valve slips often): the coarse fit reads clear within its guards where the usual fit does not in at least 7 of 20 (10 seen), and the assessment says valve-stiction in at least 12 of 20 (15 seen; 4 with the usual fit alone)", () => {
    let coarseOnly = 0;
    const got: string[] = [];
    for (const seed of SEEDS) {
      const o = { ...level(seed), stiction: { S: 3, J: 1.5 }, noise: 0.05 };
      const { s, report } = assessLevel(o);
      got.push(report.diagnosis.label);
      const P = report.details.dominantPeriodS;
      if (P === null) continue;
      const mv = Float64Array.from(s, (x) => x.mv);
      const pv = Float64Array.from(s, (x) => x.pv);
      const fine = fitStictionModel(mv, pv, P);
      const coarse = coarseLevelFit(mv, pv, P);
      if (coarse?.clear && (!fine || readStictionFit(fine) !== "clear")) coarseOnly++;
    }
    expect(coarseOnly, JSON.stringify(got)).toBeGreaterThanOrEqual(7);
    expect(count(got, "valve-stiction"), JSON.stringify(got)).toBeGreaterThanOrEqual(12);
  });

  it("a smaller band (S 2 %, J 1 %, PV noise 0.04 %) reads valve-stiction in at least 11 of 20 (15 seen; 7 with the usual fit alone)", () => {
    const got = verdicts((seed) => ({ ...level(seed), stiction: { S: 2, J: 1 }, noise: 0.04 }));
    expect(count(got, "valve-stiction"), JSON.stringify(got)).toBeGreaterThanOrEqual(11);
  });

  it("a dead band with a small slip (S 2 %, J 0.2 %), whose cycle has no dominant period (the error neither oscillates nor rings): valve-stiction in at least 5 of 20 (8 seen; none before), at least 4 of them (7 seen) on a loop whose error does not ring, from the coarse fit over a twelfth of the integral time", () => {
    const got = SEEDS.map((seed) => assessLevel({ ...level(seed), stiction: { S: 2, J: 0.2 } }).report);
    const found = got.filter((r) => r.diagnosis.label === "valve-stiction");
    expect(found.length, JSON.stringify(got.map((r) => r.diagnosis.label))).toBeGreaterThanOrEqual(5);
    const quiet = found.filter((r) => r.diagnosis.evidence.join(" ").includes("a twelfth of the integral time"));
    expect(quiet.length, JSON.stringify(got.map((r) => r.diagnosis.label))).toBeGreaterThanOrEqual(4);
    for (const r of quiet) expect(r.details.ringDepth === null || r.details.ringDepth >= -0.15).toBe(true);
  });

  it("the same level loop with a linear valve is never called sticky: as tuned, with three times the noise and twice the loads, tuned aggressively (Kc × 2.8, Ti / 3), under an outside sinusoid, or with four times the loads", () => {
    const cases: Record<string, (seed: number) => SimOptions> = {
      healthy: level,
      noisy: (seed) => ({ ...level(seed), noise: 0.3, loadSigma: 0.1 }),
      aggressive: (seed) => ({ ...level(seed), kp: 25, ti: 30, noise: 0.2 }),
      outside: (seed) => ({ ...level(seed), noise: 0.2, sine: { amplitude: 1, periodS: 300 + 20 * seed } }),
      loads: (seed) => ({ ...level(seed), loadSigma: 0.2 }),
    };
    for (const [name, make] of Object.entries(cases)) {
      const got = verdicts(make);
      expect(count(got, "valve-stiction"), `${name}: ${JSON.stringify(got)}`).toBe(0);
    }
  });

  it("the coarse fit on a level loop with a linear valve never passes its guards (as tuned and with three times the noise)", () => {
    for (const make of [level, (seed: number) => ({ ...level(seed), noise: 0.3, loadSigma: 0.1 })]) {
      for (const seed of SEEDS) {
        const { s, report } = assessLevel(make(seed));
        const P = report.details.dominantPeriodS;
        if (P === null) continue;
        const c = coarseLevelFit(Float64Array.from(s, (x) => x.mv), Float64Array.from(s, (x) => x.pv), P);
        expect(c?.clear ?? false, `seed ${seed}`).toBe(false);
      }
    }
  });
});
