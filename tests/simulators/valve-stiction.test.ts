/**
 * The valve stiction model against the behaviour published for it: Choudhury, Thornhill & Shah,
 * "Modelling valve stiction", Control Engineering Practice 13 (2005) 641-658 (its definition of S
 * and J, its flowchart, and its valve-position vs controller-output phase plots for a sinusoidal
 * controller output). The properties are stated from memory of the paper; the numbers (S, J,
 * amplitudes, periods) are chosen for the tests.
 */
import { describe, expect, it } from "vitest";
import { LoopSim } from "@/simulators/loop-sim";
import type { PlantSpec } from "@/simulators/scenario";
import { StictionValve } from "@/simulators/valve-stiction";
import { loopConfig, QUIET } from "./helpers";

/** Drive a valve with x(k) and return the valve positions. */
function drive(S: number, J: number, xs: number[]): number[] {
  const v = new StictionValve({ S, J }, xs[0]!);
  return xs.map((x) => v.update(x));
}

/** A slow sinusoidal controller output (the paper's open-loop test signal): 50 + a sin(2 pi k / n). */
function sine(a: number, n: number, cycles: number): number[] {
  return Array.from({ length: n * cycles + 1 }, (_, k) => 50 + a * Math.sin((2 * Math.PI * k) / n));
}

interface Segment {
  from: number;
  to: number;
}

/** Runs of samples where the valve does not move (index ranges, inclusive). */
function stuckRuns(y: number[]): Segment[] {
  const out: Segment[] = [];
  let start = -1;
  for (let k = 1; k < y.length; k++) {
    const flat = y[k] === y[k - 1];
    if (flat && start < 0) start = k - 1;
    if (!flat && start >= 0) {
      out.push({ from: start, to: k - 1 });
      start = -1;
    }
  }
  if (start >= 0) out.push({ from: start, to: y.length - 1 });
  return out;
}

describe("Choudhury, Thornhill & Shah (2005) two-parameter stiction model, open loop", () => {
  const n = 2000; // samples per cycle: a slow output, steps of at most 2 pi a / n
  const a = 10;
  const dxMax = (2 * Math.PI * a) / n;

  it("J = 0, S > 0: a pure dead band (backlash): flat for S of output travel after each reversal, never a jump", () => {
    const S = 4;
    const xs = sine(a, n, 3);
    const y = drive(S, 0, xs);
    // no jump: the valve never moves more than the output did in one step
    for (let k = 1; k < y.length; k++) expect(Math.abs(y[k]! - y[k - 1]!)).toBeLessThanOrEqual(Math.abs(xs[k]! - xs[k - 1]!) + 1e-12);
    // every stuck run after the first reversal spans S of output travel (to within one step)
    const runs = stuckRuns(y).filter((r) => r.from > n / 4);
    expect(runs.length).toBeGreaterThanOrEqual(5);
    for (const r of runs) {
      const span = Math.max(...xs.slice(r.from, r.to + 1)) - Math.min(...xs.slice(r.from, r.to + 1));
      expect(Math.abs(span - S)).toBeLessThanOrEqual(dxMax);
    }
    // while moving, the valve lags the output by S/2 against the direction of travel
    for (let k = n; k < y.length; k++) {
      const dx = xs[k]! - xs[k - 1]!;
      if (y[k] !== y[k - 1]) expect(y[k]!).toBeCloseTo(xs[k]! - Math.sign(dx) * (S / 2), 9);
    }
  });

  it("S = J: stick-slip with no dead band: the valve jumps by J onto the output and then follows it exactly", () => {
    const S = 3;
    const xs = sine(a, n, 3);
    const y = drive(S, S, xs);
    const jumps: number[] = [];
    for (let k = n / 2; k < y.length; k++) {
      const dy = Math.abs(y[k]! - y[k - 1]!);
      if (dy > 2 * dxMax) {
        jumps.push(dy);
        expect(y[k]).toBe(xs[k]); // lands on the output: (S - J) / 2 = 0
      }
    }
    // one jump per reversal: two per cycle over 2.75 cycles
    expect(jumps.length).toBeGreaterThanOrEqual(5);
    for (const j of jumps) expect(Math.abs(j - S)).toBeLessThanOrEqual(dxMax);
  });

  it("S > J > 0: the phase plot has stuck segments of width S, slip jumps of size J, moving segments offset by (S - J)/2", () => {
    const S = 5;
    const J = 2;
    const xs = sine(a, n, 4);
    const y = drive(S, J, xs);
    const runs = stuckRuns(y).filter((r) => r.from > n / 4);
    expect(runs.length).toBeGreaterThanOrEqual(7);
    for (const r of runs) {
      const seg = xs.slice(r.from, r.to + 1);
      const width = Math.max(...seg) - Math.min(...seg);
      expect(Math.abs(width - S)).toBeLessThanOrEqual(dxMax + 1e-9);
      // the slip at the end of the stuck run is a jump of J (plus the output's own step)
      const k = r.to + 1;
      if (k < y.length) expect(Math.abs(Math.abs(y[k]! - y[k - 1]!) - J)).toBeLessThanOrEqual(dxMax + 1e-9);
    }
    for (let k = n; k < y.length; k++) {
      const dx = xs[k]! - xs[k - 1]!;
      if (Math.abs(y[k]! - y[k - 1]!) > 0 && Math.abs(y[k]! - y[k - 1]!) <= dxMax + 1e-12) {
        expect(y[k]!).toBeCloseTo(xs[k]! - Math.sign(dx) * ((S - J) / 2), 9);
      }
    }
    // the valve travel is the output's minus (S - J) at each end of the cycle
    const yTail = y.slice(n);
    expect(Math.max(...yTail) - Math.min(...yTail)).toBeCloseTo(2 * a - (S - J), 2);
  });

  it("a valve that stops without reversing has only the stick band J to overcome, and jumps by J", () => {
    // ramp up, hold, ramp up again (the paper's 'valve comes to rest' case)
    const xs = [...Array.from({ length: 100 }, (_, k) => 40 + 0.05 * k), ...Array.from({ length: 50 }, () => 44.95), ...Array.from({ length: 100 }, (_, k) => 44.95 + 0.05 * (k + 1))];
    const S = 4;
    const J = 1.5;
    const y = drive(S, J, xs);
    const holdEnd = 150;
    const first = y.findIndex((v, k) => k > holdEnd && v !== y[holdEnd]);
    // breaks free once the output is more than J past the resting point
    expect(xs[first]! - 44.95).toBeGreaterThan(J);
    expect(xs[first]! - 44.95).toBeLessThanOrEqual(J + 0.05 + 1e-9);
    expect(y[first]! - y[first - 1]!).toBeCloseTo(xs[first]! - 44.95, 9);
  });

  it("holds a stuck valve against output jitter smaller than the bands", () => {
    const v = new StictionValve({ S: 3, J: 1 }, 50);
    const start = v.update(50);
    let seed = 7;
    for (let k = 0; k < 5000; k++) {
      seed = (seed * 1103515245 + 12345) % 2 ** 31;
      expect(v.update(50 + ((seed / 2 ** 31) - 0.5) * 1.8)).toBe(start); // jitter within +-0.9 < J
    }
  });

  it("rejects J > S and negative bands with a clear error", () => {
    expect(() => new StictionValve({ S: 1, J: 2 }, 50)).toThrow(/must not exceed/);
    expect(() => new StictionValve({ S: -1, J: 0 }, 50)).toThrow(/S must be/);
  });
});

describe("the stiction model in closed loop (LoopSim)", () => {
  // Kicked by 20 s in manual with the MV moved away from the operating point, then left in auto
  // with no noise and no disturbance: any lasting cycle comes from the valve.
  const kick = { kind: "manual-switch" as const, startS: 0, durationS: 20, moves: [{ afterS: 0, mvPct: 55 }] };
  function pvBand(plant: PlantSpec, controller: { kp: number; ti: number }, S: number, J: number): number {
    const c = { ...controller, td: 0, tf: 0, action: "reverse" as const, form: "ideal" as const };
    const drift = S > 0 ? [kick, { kind: "sticky-valve" as const, startS: 0, stictionPct: S, slipPct: J }] : [kick];
    const s = new LoopSim(loopConfig({ plant, controller: c, activity: QUIET, drift })).samples(6000).slice(-1500);
    return Math.max(...s.map((x) => x.pv)) - Math.min(...s.map((x) => x.pv));
  }
  const selfReg: PlantSpec = { type: "first-order", gain: 1, timeConstantS: 10, deadTimeS: 2 };
  // tuned to overshoot: the model sticks only where the controller output stops or reverses
  const pi = { kp: 2, ti: 8 };
  const level: PlantSpec = { type: "integrating", gain: 0.02, lagS: 0, deadTimeS: 2 };
  const piLevel = { kp: 5, ti: 80 };

  // Published closed-loop behaviour (Choudhury, Thornhill & Shah 2005, from memory): in a
  // self-regulating loop under PI control a pure dead band (J = 0) gives no limit cycle, while a
  // slip jump (J > 0) gives a stick-slip limit cycle; integrating loops cycle with a slip jump too.
  it("self-regulating PI loop: no limit cycle with J = 0, a stick-slip limit cycle with J > 0", () => {
    expect(pvBand(selfReg, pi, 0, 0)).toBeLessThan(1e-6);
    expect(pvBand(selfReg, pi, 3, 0)).toBeLessThan(0.05);
    expect(pvBand(selfReg, pi, 3, 1.5)).toBeGreaterThan(0.5);
    expect(pvBand(selfReg, pi, 3, 3)).toBeGreaterThan(0.5);
  });

  it("integrating PI loop: settles with a free valve, a stick-slip limit cycle with J > 0", () => {
    expect(pvBand(level, piLevel, 0, 0)).toBeLessThan(1e-3);
    expect(pvBand(level, piLevel, 3, 1.5)).toBeGreaterThan(0.5);
    expect(pvBand(level, piLevel, 3, 3)).toBeGreaterThan(0.5);
  });
});
