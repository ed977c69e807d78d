/**
 * The extended-horizon reading of the Harris index (lib/assessment/extended-horizon.ts, harris.ts)
 * against analytic values computed with numpy/scipy (tests/reference/generate_assessment.py ->
 * fixtures/assessment.json): for the closed-loop impulse response psi of each known loop,
 * Σ psi² / Σ_{k<h} psi² at h = 2b − 1 terms (the dead time doubled: θ + τc with SIMC's tight
 * τc = θ; Thornhill, Oettinger & Fedenczuk 1999 for the extended horizon, Skogestad 2003 for τc,
 * both from memory). Each loop is simulated here with our own random numbers over many seeds.
 * Then the rule: a second-order loop tuned by SIMC on its effective delay, with the transport
 * delay configured, reads above 3× minimum variance but within 3× at the extended horizon and is
 * not called sluggish (the code before this rule called it so); the same loop with a fifth of the
 * gain and four times the integral time still is.
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig, type AssessSample } from "@/lib/assessment";
import { diagnose } from "@/lib/assessment/diagnosis";
import { extendedHorizonSamples } from "@/lib/assessment/extended-horizon";
import { harrisIndex } from "@/lib/assessment/harris";
import { referenceFixture } from "../helpers/python";
import { diagnosisInput } from "./diagnosis-input";
import { perSeedSpread, simulate, type HarrisCase } from "./harris-sim";

const fixture = referenceFixture<{ harris: HarrisCase[] }>("assessment.json");
const byName = (n: string) => fixture.harris.find((c) => c.name === n)!;

describe("extended-horizon index (FCOR at 2θ) against the analytic value of known loops", () => {
  it("counts the horizon as harris.ts counts the delay: (2θ)/T + 1 samples, 2b − 1 for b = θ/T + 1", () => {
    expect(extendedHorizonSamples(2, 1)).toBe(5);
    expect(extendedHorizonSamples(0, 1)).toBe(1);
    for (const c of fixture.harris) expect(extendedHorizonSamples(c.delay - 1, 1)).toBe(c.extendedDelay);
  });

  for (const c of fixture.harris) {
    // The known AR-truncation bias of a stationary disturbance under integral action (harris.test.ts):
    // an MA root at z = 1 that a finite AR model approximates slowly; it grows with the horizon
    // (seen: −2.9 % at b, −5.1 % at 2b − 1 over these 20 seeds), so 6 % is allowed on that case.
    const bias = c.name.includes("stationary") ? 0.06 : 0.01;
    const spread = perSeedSpread(c);
    it(`${c.name}: analytic ${c.extendedIndex.toFixed(3)} at ${c.extendedDelay} samples (Harris ${c.harrisIndex.toFixed(3)} at ${c.delay}); mean of 20 seeds within 3 standard errors (+${bias * 100} %), every seed within ${spread * 100} %`, () => {
      const est: number[] = [];
      for (let seed = 1; seed <= 20; seed++) {
        const { y } = simulate(c, 9100 + seed, 20000);
        const e = Float64Array.from(y, (v) => -v);
        const h = harrisIndex(e, [[0, e.length]], c.delay, undefined, c.extendedDelay);
        expect(h?.extended, `seed ${seed}`).not.toBeNull();
        expect(h!.extended!.index).toBeLessThanOrEqual(h!.index + 1e-12); // a longer horizon never raises the index
        est.push(h!.extended!.index);
      }
      const mean = est.reduce((s, v) => s + v, 0) / est.length;
      const sd = Math.sqrt(est.reduce((s, v) => s + (v - mean) ** 2, 0) / (est.length - 1));
      expect(Math.abs(mean - c.extendedIndex)).toBeLessThanOrEqual((3 * sd) / Math.sqrt(est.length) + bias * c.extendedIndex);
      for (const v of est) expect(Math.abs(v - c.extendedIndex) / c.extendedIndex).toBeLessThan(spread);
    });
  }
});

/** The loop of a fixture case through the assessment, with its own PI (pi_q of the generator: Cn = [kp(1 + T/ti), −kp]). */
function assessCase(c: HarrisCase, seed: number) {
  const { y, u } = simulate(c, seed, 20000);
  const kp = -c.Cn[1]!;
  const ti = 1 / (c.Cn[0]! / kp - 1);
  const samples: AssessSample[] = Array.from(y, (yy, t) => ({ t, sp: 50, pv: 50 + yy, mv: 50 + u[t]!, mode: "auto" }));
  const config = parseLoopConfig({
    tag: "TIC-910",
    kind: "temperature",
    units: "degC",
    pvLo: -100,
    pvHi: 200,
    samplePeriodS: 1,
    deadTimeS: c.delay - 1, // the transport delay only: the 8 s lag is left out
    normalMode: "auto",
    controller: { kp, ti, td: 0, action: "reverse", mvLo: -1e6, mvHi: 1e6 },
  });
  return assessLoop(samples, config);
}

describe("the sluggish sign of the Harris index holds at the extended horizon too", () => {
  it("a SIMC-tuned loop on two lags with the transport delay configured is not called sluggish in at least 8 of 10 seeds, though its Harris index is above 3", () => {
    const c = byName("second-order-lag-simc-pi-transport-delay");
    expect(c.harrisIndex).toBeGreaterThan(3);
    expect(c.extendedIndex).toBeLessThan(3);
    let notSluggish = 0;
    let harrisAbove = 0;
    for (let seed = 1; seed <= 10; seed++) {
      const r = assessCase(c, 9300 + seed);
      if (r.diagnosis.label !== "sluggish-tuning") notSluggish++;
      if ((r.harrisIndex ?? 0) > 3) harrisAbove++;
    }
    expect(harrisAbove).toBeGreaterThanOrEqual(8);
    expect(notSluggish).toBeGreaterThanOrEqual(8);
  });

  it("the same loop with a fifth of the gain and four times the integral time reads sluggish in at least 8 of 10 seeds", () => {
    const c = byName("second-order-lag-sluggish-pi");
    expect(c.extendedIndex).toBeGreaterThan(3);
    let sluggish = 0;
    for (let seed = 1; seed <= 10; seed++) if (assessCase(c, 9400 + seed).diagnosis.label === "sluggish-tuning") sluggish++;
    expect(sluggish).toBeGreaterThanOrEqual(8);
  });

  it("the rule: Harris above 3 but within 3 at the extended horizon is no sluggish sign; above 3 at both is; without the extended figure the Harris index alone decides", () => {
    const within = diagnose(diagnosisInput({ harrisIndex: 4.5, extendedHorizonIndex: 2.4, disturbanceTimeToDeadTime: 8 }));
    expect(within.label).toBe("healthy");
    expect(within.evidence.some((l) => l.includes("extended-horizon index"))).toBe(true);
    expect(diagnose(diagnosisInput({ harrisIndex: 4.5, extendedHorizonIndex: 3.4, disturbanceTimeToDeadTime: 8 })).label).toBe("sluggish-tuning");
    expect(diagnose(diagnosisInput({ harrisIndex: 4.5, disturbanceTimeToDeadTime: 8 })).label).toBe("sluggish-tuning");
    // with the disturbance time above 15 dead times the finding stays, as one sign (no work item)
    const oneSign = diagnose(diagnosisInput({ harrisIndex: 4.5, extendedHorizonIndex: 2.4, disturbanceTimeToDeadTime: 20 }));
    expect(oneSign.label).toBe("sluggish-tuning");
    expect(oneSign.confidence).toBeLessThanOrEqual(0.6);
  });
});
