/**
 * lib/control part A against reference values computed by numpy/scipy
 * (tests/reference/generate.py -> tests/reference/fixtures/control-a.json). When python3 with
 * scipy is available the generator is re-run and the committed fixture must still match it.
 */
import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { describe, expect, it } from "vitest";
import { c2dZoh, c2dZohStateSpace } from "@/lib/control/discretize";
import { polyRoots } from "@/lib/control/roots";
import { closedLoopPolynomial, discretePid, gainHeadroom } from "@/lib/control/closed-loop";
import { maxMatchError } from "./root-match";
import { PYTHON, pythonHas, sameData } from "../helpers/python";

const here = import.meta.dirname;
const fixturePath = path.join(here, "..", "reference", "fixtures", "control-a.json");
const generator = path.join(here, "..", "reference", "generate.py");

interface Fixture {
  zoh: {
    name: string;
    num: number[];
    den: number[];
    T: number;
    delay: number;
    delaySamples: number;
    delayFraction: number;
    numZ: number[];
    denZ: number[];
    method: string;
  }[];
  roots: { name: string; kind: "simple" | "multiple"; coeffs: number[]; roots: [number, number][]; tolerance: number }[];
  loops: {
    name: string;
    plant: { a: number[]; b: number[]; nk: number; T: number };
    controller: { num: number[]; den: number[]; T: number; kind: { kp: number; ti: number; td?: number; tf?: number } };
    closedLoop: number[];
    closedLoopRadius: number;
    gainHeadroom: number;
  }[];
  steps: { zeta: number; wn: number; T: number; samples: number; overshootPercent: number }[];
}

const fixture = JSON.parse(readFileSync(fixturePath, "utf8")) as Fixture;

/** Pads two descending-power arrays on the left (aligned on the constant term). */
function alignRight(a: number[], b: number[]): [number[], number[]] {
  const n = Math.max(a.length, b.length);
  return [new Array<number>(n - a.length).fill(0).concat(a), new Array<number>(n - b.length).fill(0).concat(b)];
}

describe("c2dZoh against scipy (cont2discrete; augmented scipy.linalg.expm + ss2tf for dead times)", () => {
  for (const c of fixture.zoh) {
    it(`${c.name}: T = ${c.T} s, delay ${c.delay} s, coefficients within 1e-10`, () => {
      const d = c2dZoh({ num: c.num, den: c.den }, c.T, c.delay);
      const [num, numRef] = alignRight(d.num, c.numZ);
      const [den, denRef] = alignRight(d.den, c.denZ);
      expect(den.length).toBe(c.denZ.length);
      for (let i = 0; i < num.length; i++) expect(Math.abs(num[i]! - numRef[i]!)).toBeLessThan(1e-10);
      for (let i = 0; i < den.length; i++) expect(Math.abs(den[i]! - denRef[i]!)).toBeLessThan(1e-10);
      const ss = c2dZohStateSpace({ num: c.num, den: c.den }, c.T, c.delay);
      expect(ss.delay.samples).toBe(c.delaySamples);
      expect(Math.abs(ss.delay.fraction - c.delayFraction)).toBeLessThan(1e-12);
    });
  }
});

describe("polyRoots against polynomials built from chosen roots (numpy.poly)", () => {
  for (const c of fixture.roots) {
    // Simple roots: 1e-8 unless the rounded coefficients themselves move the roots further
    // (first-order perturbation bound from the generator); multiple roots: eps^(1/m) scale bound.
    const tol = c.kind === "simple" ? Math.max(1e-8, c.tolerance) : c.tolerance;
    it(`${c.name} (degree ${c.coeffs.length - 1}, ${c.kind}): roots within ${tol.toExponential(1)}`, () => {
      const expected = c.roots.map(([re, im]) => ({ re, im }));
      expect(maxMatchError(expected, polyRoots(c.coeffs))).toBeLessThan(tol);
    });
  }
});

describe("closed loop and gain headroom against numpy (polynomial products; scan of k with numpy.roots)", () => {
  for (const c of fixture.loops) {
    it(`${c.name}: controller, closed-loop polynomial (1e-12), radius (1e-9) and gain headroom (1e-6 relative)`, () => {
      const k = c.controller.kind;
      const ctrl = discretePid({ kp: k.kp, ti: k.ti, td: k.td, tf: k.tf, T: c.plant.T });
      const [cn, cnRef] = alignRight(ctrl.num.slice().reverse(), c.controller.num.slice().reverse());
      for (let i = 0; i < cn.length; i++) expect(Math.abs(cn[i]! - cnRef[i]!)).toBeLessThan(1e-12);
      expect(ctrl.den.length).toBe(c.controller.den.length);
      ctrl.den.forEach((x, i) => expect(Math.abs(x - c.controller.den[i]!)).toBeLessThan(1e-12));
      const cl = closedLoopPolynomial(c.plant, ctrl);
      expect(cl.length).toBe(c.closedLoop.length);
      cl.forEach((x, i) => expect(Math.abs(x - c.closedLoop[i]!)).toBeLessThan(1e-12));
      const radius = Math.max(...polyRoots(cl).map((z) => Math.hypot(z.re, z.im)));
      expect(Math.abs(radius - c.closedLoopRadius)).toBeLessThan(1e-9);
      const h = gainHeadroom(c.plant, ctrl);
      expect(Math.abs(h - c.gainHeadroom) / c.gainHeadroom).toBeLessThan(1e-6);
    });
  }
});

describe("step response overshoot against scipy.signal.lfilter", () => {
  for (const c of fixture.steps) {
    it(`zeta = ${c.zeta}: overshoot of the ZOH model's step response matches to 1e-9 %`, () => {
      const d = c2dZoh({ num: [c.wn * c.wn], den: [1, 2 * c.zeta * c.wn, c.wn * c.wn] }, c.T);
      // Difference equation den(q) y = num(q) u with den monic (descending powers of z).
      const n = d.den.length - 1;
      const num = new Array<number>(d.den.length - d.num.length).fill(0).concat(d.num);
      const y: number[] = [];
      for (let k = 0; k < c.samples; k++) {
        let acc = 0;
        for (let i = 0; i <= n; i++) if (k - i >= 0) acc += num[i]!; // unit step input
        for (let i = 1; i <= n; i++) if (k - i >= 0) acc -= d.den[i]! * y[k - i]!;
        y.push(acc);
      }
      const overshoot = 100 * (Math.max(...y) - 1);
      expect(Math.abs(overshoot - c.overshootPercent)).toBeLessThan(1e-9);
      if (c.zeta === 0.707) {
        // Common practice: zeta ~ 0.707 gives about 4-5 % overshoot (continuous value 4.3 %).
        expect(overshoot).toBeGreaterThan(4);
        expect(overshoot).toBeLessThan(5);
      }
    });
  }
});

function hasScipy(): boolean {
  return pythonHas("numpy, scipy");
}

describe.runIf(hasScipy())("fixture freshness", () => {
  it("re-running tests/reference/generate.py reproduces the committed control-a.json", () => {
    const dir = mkdtempSync(path.join(tmpdir(), "rg-control-a-"));
    try {
      const out = path.join(dir, "control-a.json");
      const r = spawnSync(PYTHON, [generator, "--out", out], { encoding: "utf8", timeout: 120_000 });
      expect(r.status, r.stderr).toBe(0);
      const fresh = JSON.parse(readFileSync(out, "utf8")) as unknown;
      expect(sameData(fixture, fresh)).toBeNull();
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
