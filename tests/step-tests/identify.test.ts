/**
 * Step-test identification against plants whose continuous parameters are the truth.
 *
 * Truth: a first-order-plus-dead-time plant (gain K, time constant tau, dead time L) simulated in
 * closed form (simulate.ts). That simulation is itself checked against scipy.signal (ZOH
 * discretisation by `cont2discrete` and `dlsim`, a reference library) below, and the fitter's own
 * discretisation against lib/control's c2dZoh, which tests/control checks against scipy.
 */
import { spawnSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { c2dZoh, proposeEstimationPeriod } from "@/lib/control";
import { parseStepTestCsv } from "@/lib/step-tests/csv";
import { simulateFopdt } from "@/lib/step-tests/fopdt";
import { identifyStepTest } from "@/lib/step-tests/identify";
import { ValidationError } from "@/lib/domain/errors";
import { mulberry32, normal } from "../helpers/seeded-random";
import { fopdtAt, stepTestCsv, type Fopdt, type MvStep } from "./simulate";
import { PYTHON, pythonHas } from "../helpers/python";

// Invented plant: a steam-heated dryer temperature, PV 80-180 degC, MV 0-100 %, logged every 2 s.
const PLANT: Fopdt = { K: 0.8, tau: 150, L: 20 };
const STEPS: MvStep[] = [
  { t: 100, du: 5 },
  { t: 700, du: -8 },
  { t: 1300, du: 5 },
];
const LOOP = { telemetryPeriodS: 2, pvLo: 80, pvHi: 180, mvLo: 0, mvHi: 100 };
const UNITS = { pvUnits: "degC", mvUnits: "%", pvLo: 80, pvHi: 180, mvLo: 0, mvHi: 100 };
const csv = (noiseStd: number, seed = 7) =>
  stepTestCsv({ plant: PLANT, steps: STEPS, mv0: 40, pv0: 130, T: 2, duration: 1900, noiseStd, seed, mode: "manual" });

function scipyAvailable(): boolean {
  return pythonHas("scipy.signal, numpy");
}

describe("the test plant's simulation (checked against scipy.signal)", () => {
  it.skipIf(!scipyAvailable())("matches scipy's ZOH discretisation and dlsim of K e^{-Ls}/(tau s+1) at every sample", () => {
    // scipy.signal.cont2discrete(method="zoh") + dlsim; the 20 s dead time is 10 whole samples at 2 s.
    const script = `
import json, numpy as np
from scipy import signal
K, tau, L, T = 0.8, 150.0, 20.0, 2.0
d = signal.cont2discrete(([K], [tau, 1.0]), T, method="zoh")
num, den = np.ravel(d[0]), np.ravel(d[1])
n = 951
u = np.zeros(n)
for t0, du in [(100, 5.0), (700, -8.0), (1300, 5.0)]:
    u[int(round(t0 / T)):] += du
N = int(round(L / T))
ud = np.concatenate([np.zeros(N), u[:n - N]])
_, y = signal.dlsim((num, den, T), ud)
print(json.dumps(np.ravel(y).tolist()))
`;
    const r = spawnSync(PYTHON, ["-c", script], { encoding: "utf8" });
    expect(r.status, r.stderr).toBe(0);
    const ref = JSON.parse(r.stdout) as number[];
    expect(ref).toHaveLength(951);
    let worst = 0;
    for (let k = 0; k < ref.length; k++) worst = Math.max(worst, Math.abs(fopdtAt(PLANT, STEPS, 2 * k) - ref[k]!));
    expect(worst).toBeLessThan(1e-9);
  });

  it("the fitter's closed-form first-order ZOH with a fractional dead time equals c2dZoh (itself checked against scipy)", () => {
    // Åström & Wittenmark 1997 sec. 2.3: a = e^{-T/tau}, b0 = 1 - e^{-(T-f)/tau}, b1 = e^{-(T-f)/tau} - a.
    const T = 2;
    const u = Array.from({ length: 80 }, (_, k) => (k >= 5 ? 1 : 0) + (k >= 40 ? -2 : 0));
    for (const L of [0, 0.7, 2, 5.3]) {
      const mine = simulateFopdt(u, T, 9, L);
      const d = c2dZoh({ num: [1], den: [9, 1] }, T, L);
      // Difference equation of num/den (descending z; den monic after scaling).
      const den = d.den.map((c) => c / d.den[0]!);
      const num = d.num.map((c) => c / d.den[0]!);
      const rel = den.length - num.length;
      const y: number[] = [];
      for (let k = 0; k < u.length; k++) {
        let s = 0;
        for (let i = 1; i < den.length; i++) s -= den[i]! * (y[k - i] ?? 0);
        for (let j = 0; j < num.length; j++) s += num[j]! * (u[k - rel - j] ?? 0);
        y.push(s);
      }
      for (let k = 0; k < u.length; k++) expect(mine[k]).toBeCloseTo(y[k]!, 10);
    }
  });
});

describe("identification of a simulated FOPDT step test", () => {
  it("recovers gain, time constant and dead time at low noise, with fit above 90 %", () => {
    // Noise 0.05 degC against PV moves of 4-6 degC (about 1 %).
    const r = identifyStepTest(parseStepTestCsv(csv(0.05), UNITS), LOOP);
    const c = r.continuous;
    // Truth: the simulated K = 0.8 degC/% (0.8 %/% of span: spans 100 degC and 100 %), tau = 150 s, L = 20 s.
    expect(Math.abs(c.gain! - 0.8) / 0.8).toBeLessThan(0.03); // within 3 %
    expect(Math.abs(c.gainPercent! - 0.8) / 0.8).toBeLessThan(0.03);
    expect(Math.abs(c.timeConstantS! - 150) / 150).toBeLessThan(0.05); // within 5 %
    expect(Math.abs(c.deadTimeS! - 20)).toBeLessThan(2); // within one logged period
    expect(Math.abs(c.arxGain! - 0.8) / 0.8).toBeLessThan(0.05); // ARX static gain B(1)/A(1)
    expect(r.identification.fitPercent).toBeGreaterThan(90);
    expect(c.fopdtFitPercent!).toBeGreaterThan(90);
    // The slowest ARX pole is the plant's lag: tau = -T/ln z within 5 %.
    const slow = c.poles.filter((p) => p.timeConstantS !== null).sort((a, b) => b.timeConstantS! - a.timeConstantS!)[0]!;
    expect(Math.abs(slow.timeConstantS! - 150) / 150).toBeLessThan(0.05);
    expect(r.warnings).toEqual([]);
  });

  it("recovers the parameters almost exactly without noise", () => {
    const c = identifyStepTest(parseStepTestCsv(csv(0), UNITS), LOOP).continuous;
    expect(c.gain!).toBeCloseTo(0.8, 3);
    expect(c.timeConstantS!).toBeCloseTo(150, 0);
    expect(c.deadTimeS!).toBeCloseTo(20, 1);
  });

  it("proposes the estimation period the true plant gives, and the ZOH delay structure for it", () => {
    const r = identifyStepTest(parseStepTestCsv(csv(0.05), UNITS), LOOP);
    // Truth-based proposal: the rule of thumb wn T ~ 0.1-0.6 (Åström & Wittenmark 1997, from memory)
    // applied to the simulated tau = 150 s at the 2 s telemetry period.
    const truth = proposeEstimationPeriod({ from: "step-test", timeConstant: 150, telemetryPeriod: 2 });
    const p = r.proposal!;
    expect(p.telemetryPeriodS).toBe(2);
    expect(Math.abs(p.factor - truth.factor)).toBeLessThanOrEqual(1);
    expect(p.estimationPeriodS).toBe(p.factor * 2);
    expect(p.wnT).toBeGreaterThan(0.1);
    expect(p.wnT).toBeLessThan(0.6);
    // Identified at the proposed period, so the structure is in its units.
    expect(r.identification.periodS).toBe(p.estimationPeriodS);
    // 20 s dead time at a period above 20 s: N = 0 whole periods, so nk = 1 (ZOH with a fractional
    // delay, Åström & Wittenmark 1997 sec. 2.3).
    expect(p.modelStructure.nk).toBe(1);
    expect(p.modelStructure.na).toBeGreaterThanOrEqual(1);
    expect(p.reason).toMatch(/wn T/);
  });

  it("plots measured against simulated PV in engineering units, thinned", () => {
    const r = identifyStepTest(parseStepTestCsv(csv(0.05), UNITS), LOOP);
    const ch = r.chart;
    expect(ch.t.length).toBe(ch.pvMeasured.length);
    expect(ch.t.length).toBe(ch.pvSimulated.length);
    expect(ch.t.length).toBe(ch.pvSummary!.length);
    // The logged grid (2 s over 1900 s), not the coarser identification period.
    expect(ch.t.length).toBe(950);
    expect(ch.t[1]! - ch.t[0]!).toBe(2);
    // Before the first step both sit at the 130 degC operating point (baseline from the lead-in).
    expect(ch.pvMeasured[0]!).toBeCloseTo(130, 0);
    expect(ch.pvSimulated[0]!).toBeCloseTo(130, 0);
    // Long after the first step the simulated PV has moved by K * 5 = 4 degC (the truth).
    const i = ch.t.findIndex((t) => t >= 650);
    expect(ch.pvSimulated[i]! - 130).toBeGreaterThan(3.6);
    expect(ch.pvSimulated[i]! - 130).toBeLessThan(4.4);
    // The FOPDT summary follows the measured PV to within a few noise widths (noise 0.05 degC).
    const rms = Math.sqrt(ch.pvSummary!.reduce((s, v, k) => s + (v - ch.pvMeasured[k]!) ** 2, 0) / ch.t.length);
    expect(rms).toBeLessThan(0.1);
  });

  it("a log in which the MV never moves is refused with a reason (422)", () => {
    const flat = stepTestCsv({ plant: PLANT, steps: [], mv0: 40, pv0: 130, T: 2, duration: 200, noiseStd: 0.05 });
    expect(() => identifyStepTest(parseStepTestCsv(flat, UNITS), LOOP)).toThrow(/MV does not move/);
    try {
      identifyStepTest(parseStepTestCsv(flat, UNITS), LOOP);
    } catch (e) {
      expect(e).toBeInstanceOf(ValidationError);
      expect((e as ValidationError).status).toBe(422);
    }
  });

  it("a gap of more than ten logged periods is refused with the lines around it", () => {
    const lines = csv(0.05).trim().split("\n");
    const cut = [...lines.slice(0, 101), ...lines.slice(131)].join("\n"); // drops 30 rows (60 s)
    expect(() => identifyStepTest(parseStepTestCsv(cut, UNITS), LOOP)).toThrow(/Lines 101–102: a gap of 62 s/);
  });

  it("closed-loop data are flagged", () => {
    const text = csv(0.05).replace(/,manual$/gm, ",auto");
    const r = identifyStepTest(parseStepTestCsv(text, UNITS), LOOP);
    expect(r.data.closedLoop).toBe(true);
    expect(r.warnings.join(" ")).toMatch(/closed-loop/);
  });
});

describe("other kinds of step tests", () => {
  it("set-point steps in auto under a PI: the plant MV -> PV is still recovered at low noise", () => {
    // Invented flow loop: K = 1.2 (m3/h)/%, tau = 8 s, L = 3 s (6 whole samples at 0.5 s), so the
    // exact ZOH recursion is y(k+1) = a y(k) + K (1 - a) u(k - 6), a = e^{-T/tau} (Åström &
    // Wittenmark 1997 sec. 2.3). PI in position form, Kc = 0.8 %/(m3/h), Ti = 8 s.
    const T = 0.5;
    const a = Math.exp(-T / 8);
    const randn = normal(mulberry32(5));
    const lines = ["t,mv,pv,sp,mode"];
    const du: number[] = [];
    let y = 0;
    let integral = 40;
    for (let k = 0; k < 1200; k++) {
      const t = k * T;
      const sp = 50 + (t >= 30 ? 10 : 0) + (t >= 250 ? -15 : 0) + (t >= 450 ? 5 : 0);
      const pv = 50 + y + 0.05 * randn();
      const e = sp - pv;
      integral += ((0.8 * T) / 8) * e;
      const u = Math.min(100, Math.max(0, integral + 0.8 * e));
      du.push(u - 40);
      lines.push(`${t},${u.toFixed(4)},${pv.toFixed(4)},${sp},auto`);
      y = a * y + 1.2 * (1 - a) * (du[k - 6] ?? 0);
    }
    const units = { pvUnits: "m3/h", mvUnits: "%", pvLo: 0, pvHi: 100, mvLo: 0, mvHi: 100 };
    const r = identifyStepTest(parseStepTestCsv(lines.join("\n"), units), { telemetryPeriodS: 1, pvLo: 0, pvHi: 100, mvLo: 0, mvHi: 100 });
    expect(r.data.closedLoop).toBe(true);
    expect(Math.abs(r.continuous.gain! - 1.2) / 1.2).toBeLessThan(0.05);
    expect(Math.abs(r.continuous.timeConstantS! - 8) / 8).toBeLessThan(0.05);
    expect(Math.abs(r.continuous.deadTimeS! - 3)).toBeLessThan(0.5);
    expect(r.identification.fitPercent).toBeGreaterThan(90);
  });

  it("an integrating plant is reported by its ramp rate, with no gain or time constant, and its z = 1 pole not used for the period", () => {
    // Invented level: dy/dt = 0.01 %/s per % of MV, dead time 2 s; closed form y(t) = sum du 0.01 (t - t_i - 2)+.
    const randn = normal(mulberry32(9));
    const moves = [
      { t: 50, du: 5 },
      { t: 150, du: -5 },
      { t: 300, du: -5 },
      { t: 400, du: 5 },
    ];
    const lines = ["t,mv,pv,mode"];
    for (let t = 0; t < 600; t++) {
      let u = 50;
      let y = 40;
      for (const m of moves) {
        if (t >= m.t) u += m.du;
        y += m.du * 0.01 * Math.max(0, t - m.t - 2);
      }
      lines.push(`${t},${u},${(y + 0.02 * randn()).toFixed(4)},manual`);
    }
    const units = { pvUnits: "%", mvUnits: "%", pvLo: 0, pvHi: 100, mvLo: 0, mvHi: 100 };
    const r = identifyStepTest(parseStepTestCsv(lines.join("\n"), units), { telemetryPeriodS: 1, pvLo: 0, pvHi: 100, mvLo: 0, mvHi: 100 });
    const c = r.continuous;
    expect(c.integrating).toBe(true);
    expect(c.gain).toBeNull();
    expect(c.timeConstantS).toBeNull();
    expect(Math.abs(c.rate! - 0.01) / 0.01).toBeLessThan(0.05); // truth: 0.01 %/s per %
    expect(Math.abs(c.deadTimeS! - 2)).toBeLessThan(1);
    expect(r.warnings.join(" ")).toMatch(/integrates/);
    // A period chosen from the z = 1 pole would hit the 1000x cap; it must come from the faster modes or be absent.
    if (r.proposal) expect(r.proposal.factor).toBeLessThan(1000);
  });
});
