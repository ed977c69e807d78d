/**
 * The spectral-line test with the set point's moves left out (lib/assessment/spectral-line.ts,
 * `settledMask`): the error's answer to a set-point step is a transient of the loop's own making
 * whose broad spectrum hides a weak outside cycle.
 * - Against scipy (tests/reference/generate_settling.py, fixture tests/reference/fixtures/
 *   settling.json): the error after a 10 % set-point step of the loop of loop-sim.ts, computed by
 *   scipy.signal.lfilter for four tunings; what the mask leaves in is at most 2 % of the move for
 *   SIMC-tuned and dead-time-dominant loops and at most 15 % for an underdamped or a sluggish one,
 *   and the mask is no longer than twice the 2 % settling time.
 * - Over many seeds (Fisher 1929: a smooth spectrum has no line): the simulated loop (invented
 *   data, SIMC-tuned: Skogestad 2003, kp ≈ 2.9, Ti = τ = 20 s) with an AR(1) load and irregular
 *   set-point moves but no sinusoid reads a line in at most 5 of 100 seeds (0 seen); with a weak
 *   240 s sinusoid on PV the diagnosis is external-disturbance in at least 7 of 10 seeds (8 seen;
 *   0 of 10 with the moves' responses left in), never without it.
 * - The diagnosis (rule level): a peak of 80× its neighbours' median whose immediate neighbours
 *   rise with it (a lightly damped mode's hump) is no outside cycle; the same peak standing 30×
 *   above them is.
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig } from "@/lib/assessment";
import { diagnose } from "@/lib/assessment/diagnosis";
import { isLine, settledMask, strongestLine } from "@/lib/assessment/spectral-line";
import { Prng } from "@/simulators/prng";
import { diagnosisInput } from "./diagnosis-input";
import { flowLoopJson, simulateLoop } from "./loop-sim";
import { pythonHas, referenceFixture, staleReference } from "../helpers/python";

interface RefCase {
  name: string;
  move: number;
  settle2pct: number;
  e: number[];
}
const fixture = referenceFixture<{ cases: RefCase[] }>("settling.json");
const hasScipy = pythonHas("numpy, scipy");

/** The error trace of a case after 100 samples at rest, with its set point (span 100). */
function traceOf(c: RefCase): { e: Float64Array; sp: Float64Array } {
  const n = 100 + c.e.length;
  const e = new Float64Array(n);
  const sp = new Float64Array(n).fill(50);
  for (let i = 0; i < c.e.length; i++) {
    e[100 + i] = c.e[i]!;
    sp[100 + i] = 50 + c.move;
  }
  return { e, sp };
}

describe("set-point moves left out of the line test", () => {
  it.skipIf(!hasScipy)("the fixture is up to date with its scipy generator", () => {
    expect(staleReference("generate_settling.py", "settling.json")).toBeNull();
  });

  it.each([
    ["simc", 0.02],
    ["dead-time", 0.02],
    ["tight", 0.15],
    ["sluggish", 0.15],
  ] as const)("%s: the answer to a step left in is at most %s of the move (scipy's error trace)", (name, bound) => {
    const c = fixture.cases.find((x) => x.name === name)!;
    const { e, sp } = traceOf(c);
    const include = new Uint8Array(e.length).fill(1);
    const m = settledMask(e, sp, include, 100);
    expect(m).not.toBe(include);
    for (let i = 0; i < 100; i++) expect(m[i]).toBe(1);
    let end = 100;
    while (end < e.length && m[end] === 0) end++;
    for (let i = end; i < e.length; i++) expect(m[i]).toBe(1);
    let left = 0;
    for (let i = end; i < e.length; i++) left = Math.max(left, Math.abs(e[i]!));
    expect(left / c.move).toBeLessThanOrEqual(bound);
    expect(end - 100).toBeLessThanOrEqual(2 * c.settle2pct);
  });

  it("a set point that moves all the time leaves the record as it is", () => {
    const n = 2000;
    const e = new Float64Array(n);
    const sp = Float64Array.from({ length: n }, (_, i) => 50 + Math.sin(i / 50));
    const include = new Uint8Array(n).fill(1);
    expect(settledMask(e, sp, include, 100)).toBe(include);
  });
});

const cfg = parseLoopConfig(flowLoopJson("FIC-311", { deadTimeS: 3, controller: { kp: 2.9, ti: 20, mvLo: 0, mvHi: 100 } }));
/** Set-point moves of 4–8 % every 400–900 s, up or down at random. */
function moves(seed: number): { at: number; sp: number }[] {
  const r = new Prng(500 + seed);
  const out: { at: number; sp: number }[] = [];
  for (let t = 300; t < 6000; t += Math.round(r.uniform(400, 900))) out.push({ at: t, sp: 50 + (r.chance(0.5) ? 1 : -1) * 8 * r.uniform(0.5, 1) });
  return out;
}
const run = (seed: number, sine: boolean) =>
  simulateLoop({ seed, n: 6000, kp: 2.9, ti: 20, deadS: 3, loadSigma: 0.1, loadPole: 0.98, spSteps: moves(seed), ...(sine ? { sine: { amplitude: 0.9, periodS: 240 } } : {}) });

describe("a weak outside cycle under set-point moves", () => {
  it("without a sinusoid, the error with the moves left out reads a line in at most 5 of 100 seeds", () => {
    let lines = 0;
    for (let seed = 1; seed <= 100; seed++) {
      const s = run(seed, false);
      const e = Float64Array.from(s, (x) => x.sp - x.pv);
      const sp = Float64Array.from(s, (x) => x.sp);
      if (isLine(strongestLine(e, settledMask(e, sp, new Uint8Array(e.length).fill(1), 100), 1))) lines++;
    }
    expect(lines).toBeLessThanOrEqual(5);
  });

  it("a 240 s sinusoid reads external-disturbance in at least 7 of 10 seeds, with its period within 2 %", () => {
    let found = 0;
    for (let seed = 1; seed <= 10; seed++) {
      const r = assessLoop(run(seed, true), cfg);
      expect(r.oscillation.detected).toBe(false);
      if (r.diagnosis.label === "external-disturbance") {
        found++;
        expect(Math.abs(r.details.spectralLine!.periodS / 240 - 1)).toBeLessThan(0.02);
      }
    }
    expect(found).toBeGreaterThanOrEqual(7);
  });

  it("the same loop and moves without the sinusoid never read external-disturbance", () => {
    for (let seed = 1; seed <= 10; seed++) expect(assessLoop(run(seed, false), cfg).diagnosis.label).not.toBe("external-disturbance");
  });
});

describe("the line's width in the diagnosis", () => {
  const ringing = { ringDepth: -0.3, overshoot: 0.6 };
  it("a peak whose immediate neighbours rise with it does not make an outside cycle", () => {
    const d = diagnose(diagnosisInput({ ...ringing, spectralLine: { periodS: 600, ratio: 80, share: 0.4, near: 5 } }));
    expect(d.label).not.toBe("external-disturbance");
  });
  it("the same peak standing well above its immediate neighbours does", () => {
    const d = diagnose(diagnosisInput({ ...ringing, spectralLine: { periodS: 600, ratio: 80, share: 0.4, near: 30 } }));
    expect(d.label).toBe("external-disturbance");
  });
});
