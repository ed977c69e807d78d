/**
 * Outside load or sticking valve (lib/assessment/load-or-valve.ts): the time asymmetry of the
 * control error's half-cycles. Checks:
 * - the figure against its closed form on a signal of known shape: alternating pulses that jump
 *   and decay as e^(-t/τ) over half-cycles of length H give q = -tanh(H/(4τ)) (derived in
 *   docs/assessment.md: A1 = τ(1 - e^(-h)), A2 = τ(e^(-h) - e^(-2h)), h = H/(2τ)); the same
 *   signal run backwards gives +tanh(H/(4τ)); a sinusoid gives 0, as any time-reversible
 *   (linear Gaussian) signal does on average (Weiss, J. Appl. Probab. 12, 1975, from memory);
 * - closed loops over many seeds and two tunings: a square-wave load at the plant input of a PI
 *   loop without stiction is never called stiction; a sticking valve by the two-parameter model
 *   of Choudhury, Thornhill & Shah (Control Eng. Practice 13, 2005) still is, and never reads as
 *   an outside load (at the low gain its half-cycles are jump-then-decay too, but their timing
 *   varies from cycle to cycle; the load's repeats like a clock).
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig } from "@/lib/assessment";
import { halfCycleAsymmetry } from "@/lib/assessment/load-or-valve";
import { flowLoopJson, simulateLoop, type SimOptions } from "./loop-sim";

const mean = (v: number[]) => v.reduce((s, x) => s + x, 0) / v.length;

/** Alternating pulses s_k e^(-t/τ), half-cycles of H samples, 40 of them. */
function pulses(H: number, tau: number): Float64Array {
  const x = new Float64Array(40 * H);
  for (let i = 0; i < x.length; i++) x[i] = (Math.floor(i / H) % 2 ? -1 : 1) * Math.exp(-(i % H) / tau);
  return x;
}

describe("time asymmetry of half-cycles against its closed form", () => {
  for (const [H, tau] of [[100, 25], [100, 50], [200, 30]] as const) {
    it(`jump then decay (H ${H}, τ ${tau}) gives -tanh(H/4τ); run backwards +tanh(H/4τ)`, () => {
      const x = pulses(H, tau);
      const expected = Math.tanh(H / (4 * tau));
      const q = halfCycleAsymmetry(x, null, 2 * H).q;
      expect(q.length).toBeGreaterThanOrEqual(30);
      // The closed form is for the raw signal; the figure's light smoothing (a twentieth of the
      // period, a tenth of the half-cycle) blurs each jump and can only shrink the asymmetry:
      // within 15 % below the closed form (ours).
      expect(mean(q) / -expected).toBeGreaterThan(0.85);
      expect(mean(q) / -expected).toBeLessThanOrEqual(1.0001);
      const back = halfCycleAsymmetry(x.slice().reverse(), null, 2 * H).q;
      expect(mean(back) / expected).toBeGreaterThan(0.85);
      expect(mean(back) / expected).toBeLessThanOrEqual(1.0001);
      // the jumps come every H samples exactly
      const lengths = halfCycleAsymmetry(x, null, 2 * H).lengths;
      expect(lengths.length).toBeGreaterThanOrEqual(30);
      expect(Math.max(...lengths.map((L) => Math.abs(L - H)))).toBeLessThanOrEqual(1);
    });
  }
  it("a sinusoid with noise is symmetric in time (|q| < 0.02)", () => {
    let state = 12345;
    const rnd = () => ((state = (state * 1103515245 + 12345) % 2 ** 31) / 2 ** 31) - 0.5;
    const x = new Float64Array(20000);
    for (let i = 0; i < x.length; i++) x[i] = Math.sin((2 * Math.PI * i) / 200) + 0.3 * rnd();
    expect(Math.abs(mean(halfCycleAsymmetry(x, null, 200).q))).toBeLessThan(0.02);
  });
});

/** Label, reading and figures of one simulated loop (for the failure message). */
function run(kp: number, o: Omit<SimOptions, "n" | "kp" | "ti"> & { n?: number }): string {
  const r = assessLoop(simulateLoop({ n: 8000, kp, ti: 15, ...o }), parseLoopConfig(flowLoopJson("FIC-517", {}, { kp })));
  const l = r.details.loadOrValve;
  return `${r.diagnosis.label}/${l?.reading}/${l?.asymmetry?.toFixed(2)}/${l?.lengthCv?.toFixed(2)}`;
}

// Plant of loop-sim: first order, gain 1, time constant 20 s, dead time 2 s, sampled at 1 s; PI
// with Ti 15 s and Kp 0.5 (a low gain: the valve's band is small against the output's swing)
// or 1.5 (SIMC for this plant gives Kp 5, Skogestad 2003, from memory).
for (const kp of [0.5, 1.5]) {
  describe(`square-wave outside load against a sticking valve, PI Kp ${kp}, Ti 15 s (20 seeds each)`, () => {
    it("a square-wave load at the plant input of a loop without stiction is never read as stiction", () => {
      // periods of 150-340 s (7-17 plant time constants: the loop removes most of each step), 2.2-6 % of MV
      const got = Array.from({ length: 20 }, (_, i) => run(kp, { seed: i + 1, squareLoad: { amplitude: 2 + 0.2 * (i + 1), periodS: 140 + 10 * (i + 1) } }));
      const text = got.join(", ");
      expect(got.filter((g) => g.startsWith("valve-stiction")).length, text).toBe(0);
      expect(got.filter((g) => g.startsWith("external-disturbance/load")).length, text).toBeGreaterThanOrEqual(18);
    });

    it("a sticking valve (Choudhury et al. 2005, S 3-5 %, J 0.5-2 %) still reads valve-stiction and never as an outside load", () => {
      const got = Array.from({ length: 20 }, (_, i) => run(kp, { seed: i + 1, stiction: { S: 3 + ((i + 1) % 5) * 0.5, J: 0.5 + ((i + 1) % 4) * 0.5 } }));
      const text = got.join(", ");
      expect(got.filter((g) => g.includes("/load/")).length, text).toBe(0);
      expect(got.filter((g) => g.startsWith("valve-stiction")).length, text).toBeGreaterThanOrEqual(17);
    });
  });
}

describe("live windows (3,600 samples, 10-20 half-cycles), PI Kp 0.5", () => {
  it("a sticking valve never reads as an outside load over 80 seeds (with few intervals the clock counts its sampling error: without it one of these read as a load)", () => {
    const got = Array.from({ length: 80 }, (_, i) => run(0.5, { seed: i + 1, n: 3600, stiction: { S: 3 + ((i + 1) % 5) * 0.5, J: 0.5 + ((i + 1) % 4) * 0.5 } }));
    expect(got.filter((g) => g.includes("/load/")).length, got.join(", ")).toBe(0);
  });
  it("a square-wave load still does (20 seeds)", () => {
    const got = Array.from({ length: 20 }, (_, i) => run(0.5, { seed: i + 1, n: 3600, squareLoad: { amplitude: 2 + 0.2 * (i + 1), periodS: 140 + 10 * (i + 1) } }));
    expect(got.filter((g) => g.startsWith("external-disturbance/load")).length, got.join(", ")).toBeGreaterThanOrEqual(18);
  });
});

describe("an outside sinusoid on PV (time-reversible) does not read as an abrupt load (10 seeds)", () => {
  it("no load reading, read as an outside disturbance", () => {
    const got = Array.from({ length: 10 }, (_, i) => run(0.5, { seed: i + 1, sine: { amplitude: 2, periodS: 100 + 15 * (i + 1) } }));
    const text = got.join(", ");
    expect(got.filter((g) => g.includes("/load/")).length, text).toBe(0);
    expect(got.filter((g) => g.startsWith("external-disturbance")).length, text).toBeGreaterThanOrEqual(8);
  });
});
