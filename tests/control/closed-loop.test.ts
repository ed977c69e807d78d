import { eigs } from "mathjs";
import { describe, expect, it } from "vitest";
import {
  closedLoopArxInto,
  closedLoopPolynomial,
  discretePid,
  gainHeadroom,
} from "@/lib/control/closed-loop";
import { c2dZoh, c2dZohStateSpace } from "@/lib/control/discretize";
import { polyRoots } from "@/lib/control/roots";
import { ControlArgumentError, NonFiniteInputError, PeriodMismatchError } from "@/lib/control/errors";
import type { Complex, QTf } from "@/lib/control/types";
import { maxMatchError } from "./root-match";

const radius = (p: number[]): number => Math.max(...polyRoots(p).map((z) => Math.hypot(z.re, z.im)));

/** C(e^{jw}) of a q^-1 controller. */
function evalQ(c: QTf, w: number): Complex {
  let re = 0;
  let im = 0;
  const ev = (p: number[]): Complex => {
    let r = 0;
    let i = 0;
    p.forEach((x, k) => {
      r += x * Math.cos(-w * k);
      i += x * Math.sin(-w * k);
    });
    return { re: r, im: i };
  };
  const n = ev(c.num);
  const d = ev(c.den);
  const d2 = d.re * d.re + d.im * d.im;
  re = (n.re * d.re + n.im * d.im) / d2;
  im = (n.im * d.re - n.re * d.im) / d2;
  return { re, im };
}

describe("discretePid", () => {
  it("gives the velocity-form PI of docs/domain.md §3: N = kp[(1 + T/ti) - q^-1], D = 1 - q^-1", () => {
    const c = discretePid({ kp: 2, ti: 5, T: 1 });
    expect(c.num[0]).toBeCloseTo(2.4, 15);
    expect(c.num[1]).toBeCloseTo(-2, 15);
    expect(c.den).toEqual([1, -1]);
    expect(c.T).toBe(1);
  });

  it("flips the sign for direct action and never accepts a negative gain", () => {
    const r = discretePid({ kp: 2, ti: 5, T: 1, action: "reverse" });
    const d = discretePid({ kp: 2, ti: 5, T: 1, action: "direct" });
    expect(d.num).toEqual(r.num.map((x) => -x));
    expect(d.den).toEqual(r.den);
    expect(() => discretePid({ kp: -2, ti: 5, T: 1 })).toThrow(ControlArgumentError);
    expect(() => discretePid({ kp: 1, ti: -5, T: 1 })).toThrow(ControlArgumentError);
    expect(() => discretePid({ kp: 1, ti: 5, T: 0 })).toThrow(ControlArgumentError);
  });

  it("has no pole at z = 1 without integral action (positional P / PD)", () => {
    expect(discretePid({ kp: 3, T: 1 })).toEqual({ num: [3], den: [1], T: 1 });
    const pd = discretePid({ kp: 1, td: 2, T: 0.5 });
    expect(pd.den.reduce((s, x) => s + x, 0)).not.toBe(0);
  });

  it("expresses the same controller in ideal, parallel (ki = kp/ti, kd = kp td) and series (td = 0) forms", () => {
    const ideal = discretePid({ kp: 1.5, ti: 8, td: 2, tf: 0.25, T: 0.5 });
    const parallel = discretePid({ kp: 1.5, ti: 8 / 1.5, td: 1.5 * 2, tf: 0.25, T: 0.5, form: "parallel" });
    ideal.num.forEach((x, i) => expect(parallel.num[i]).toBeCloseTo(x, 13));
    expect(parallel.den).toEqual(ideal.den);
    const seriesPi = discretePid({ kp: 1.5, ti: 8, T: 0.5, form: "series" });
    expect(seriesPi).toEqual(discretePid({ kp: 1.5, ti: 8, T: 0.5 }));
  });

  it("approaches the continuous PID at low frequency: |C(e^{jwT}) - C(jw)| / |C(jw)| < 1 % for wT <= 0.02", () => {
    const kp = 1.2;
    const ti = 10;
    const td = 1.5;
    const tf = 0.15;
    const T = 0.05;
    for (const form of ["ideal", "series"] as const) {
      const c = discretePid({ kp, ti, td, tf, T, form });
      for (const w of [0.02, 0.1, 0.4]) {
        // continuous C(jw)
        const inv = { re: 0, im: -1 / (ti * w) }; // 1/(ti s)
        const dd = { re: 1, im: tf * w }; // tf s + 1
        const dnum = { re: 0, im: td * w }; // td s
        const dq = dd.re * dd.re + dd.im * dd.im;
        const der = { re: (dnum.re * dd.re + dnum.im * dd.im) / dq, im: (dnum.im * dd.re - dnum.re * dd.im) / dq };
        let cont: Complex;
        if (form === "ideal") cont = { re: kp * (1 + inv.re + der.re), im: kp * (inv.im + der.im) };
        else {
          const a = { re: 1 + inv.re, im: inv.im };
          const b = { re: 1 + der.re, im: der.im };
          cont = { re: kp * (a.re * b.re - a.im * b.im), im: kp * (a.re * b.im + a.im * b.re) };
        }
        const disc = evalQ(c, w * T);
        const err = Math.hypot(disc.re - cont.re, disc.im - cont.im) / Math.hypot(cont.re, cont.im);
        expect(err).toBeLessThan(0.01);
      }
    }
  });
});

describe("closedLoopPolynomial", () => {
  it("matches the hand-derived first-order plant + PI: (1 - 0.8q^-1)(1 - q^-1) + 0.2q^-1(2.4 - 2q^-1) = 1 - 1.32q^-1 + 0.4q^-2", () => {
    const cl = closedLoopPolynomial({ a: [-0.8], b: [0.2], nk: 1, T: 1 }, discretePid({ kp: 2, ti: 5, T: 1 }));
    expect(cl).toHaveLength(3);
    expect(cl[0]).toBeCloseTo(1, 15);
    expect(cl[1]).toBeCloseTo(-1.32, 15);
    expect(cl[2]).toBeCloseTo(0.4, 15);
  });

  it("gives the same polynomial for an ARX plant and the equivalent DiscreteTf (q^-nk B/A = z^(na-nb-nk+1)...)", () => {
    const arx = { a: [-1.5, 0.56], b: [0.05, 0.04], nk: 2, T: 0.5 };
    // q^-2 (0.05 + 0.04 q^-1) / (1 - 1.5 q^-1 + 0.56 q^-2) = (0.05 z + 0.04) / (z^3 - 1.5 z^2 + 0.56 z)
    const tf = { num: [0.05, 0.04], den: [1, -1.5, 0.56, 0], T: 0.5 };
    const ctrl = discretePid({ kp: 1.5, ti: 4, td: 0.5, T: 0.5 });
    const p1 = closedLoopPolynomial(arx, ctrl);
    const p2 = closedLoopPolynomial(tf, ctrl);
    expect(p2).toHaveLength(p1.length);
    p1.forEach((x, i) => expect(p2[i]).toBeCloseTo(x, 14));
  });

  it("finds the same closed-loop poles as the eigenvalues of the closed-loop state matrix (ZOH plant with dead time + PI; mathjs eigs)", () => {
    const T = 0.5;
    const ss = c2dZohStateSpace({ num: [1], den: [4, 4.5, 1] }, T, 0.8); // 1/((4s + 1)(0.5s + 1)), 0.8 s dead time
    const kp = 1.1;
    const ti = 3;
    // The PI written as states, from its definition (not from discretePid): u(k) = kp e(k) + kp (T/ti) I(k),
    // I(k) = I(k-1) + e(k); state s(k) = I(k-1). With r = 0, e = -y = -c x (d = 0 for this plant):
    // u = -(kp + g) c x + g s, s(k+1) = s(k) - c x(k), g = kp T/ti.
    const n = ss.a.length;
    const g = kp * (T / ti);
    const A: number[][] = [];
    for (let r = 0; r < n; r++) {
      const row = ss.a[r]!.map((a, i) => a - ss.b[r]! * (kp + g) * ss.c[i]!);
      row.push(ss.b[r]! * g);
      A.push(row);
    }
    A.push([...ss.c.map((c) => -c), 1]);
    const ev = eigs(A).values as unknown as { toArray?: () => unknown[] } | unknown[];
    const list = (Array.isArray(ev) ? ev : ev.toArray!()) as (number | { re: number; im: number })[];
    const truth: Complex[] = list.map((v) => (typeof v === "number" ? { re: v, im: 0 } : { re: v.re, im: v.im }));
    const plant = c2dZoh({ num: [1], den: [4, 4.5, 1] }, T, 0.8);
    const cl = closedLoopPolynomial(plant, discretePid({ kp, ti, T }));
    const poles = polyRoots(cl);
    expect(poles).toHaveLength(truth.length);
    expect(maxMatchError(truth, poles)).toBeLessThan(1e-9);
  });

  it("refuses to combine a plant and a controller at different periods", () => {
    expect(() => closedLoopPolynomial({ a: [-0.8], b: [0.2], nk: 1, T: 1 }, discretePid({ kp: 1, ti: 5, T: 2 }))).toThrow(
      PeriodMismatchError,
    );
  });

  it("names non-finite coefficients and a non-causal controller", () => {
    const pi = discretePid({ kp: 1, ti: 5, T: 1 });
    expect(() => closedLoopPolynomial({ a: [Number.NaN], b: [0.2], nk: 1, T: 1 }, pi)).toThrow(NonFiniteInputError);
    expect(() => closedLoopPolynomial({ num: [0.2], den: [1, Number.POSITIVE_INFINITY], T: 1 }, pi)).toThrow(NonFiniteInputError);
    expect(() => closedLoopPolynomial({ a: [-0.8], b: [0.2], nk: 1, T: 1 }, { num: [1], den: [0, 1], T: 1 })).toThrow(ControlArgumentError);
    expect(() => closedLoopPolynomial({ a: [-0.8], b: [0.2], nk: 0, T: 1 }, pi)).toThrow(ControlArgumentError);
  });

  it("has an allocation-free ARX form that agrees with closedLoopPolynomial", () => {
    const ctrl = discretePid({ kp: 1.2, ti: 8, td: 2, tf: 0.2, T: 1 });
    const theta = new Float64Array([-1.6, 0.64, 0.02, 0.015, 99 /* offset entry, ignored */]);
    const out = new Float64Array(16);
    const n = closedLoopArxInto(theta, 2, 2, 2, ctrl.num, ctrl.den, out);
    const ref = closedLoopPolynomial({ a: [-1.6, 0.64], b: [0.02, 0.015], nk: 2, T: 1 }, ctrl);
    expect(n).toBe(ref.length);
    ref.forEach((x, i) => expect(out[i]).toBeCloseTo(x, 15));
  });
});

describe("closedLoopArxInto, ARX(2,2,1) under a PI (the tracker's common case)", () => {
  it("gives the general loop's coefficients bit for bit, and agrees with closedLoopPolynomial", () => {
    // seeded random plants and PI tunings (mulberry32); the general path is reached with a third
    // b coefficient of zero, which adds exact zeros only
    let a = 20261202 >>> 0;
    const rand = () => {
      a = (a + 0x6d2b79f5) >>> 0;
      let t = a;
      t = Math.imul(t ^ (t >>> 15), t | 1);
      t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
      return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
    };
    const fast = new Float64Array(8);
    const general = new Float64Array(8);
    for (let k = 0; k < 500; k++) {
      const pi = discretePid({ kp: 0.05 + 3 * rand(), ti: 1 + 60 * rand(), T: 1 });
      const th = [-2 * rand(), rand() - 0.3, 0.3 * (rand() - 0.5), 0.3 * (rand() - 0.5)];
      expect(closedLoopArxInto(th, 2, 2, 1, pi.num, pi.den, fast)).toBe(4);
      expect(closedLoopArxInto([th[0]!, th[1]!, th[2]!, th[3]!, 0], 2, 3, 1, pi.num, pi.den, general)).toBe(5);
      expect(general[4]).toBe(0);
      for (let i = 0; i < 4; i++) expect(fast[i]).toBe(general[i]);
      const ref = closedLoopPolynomial({ a: th.slice(0, 2), b: th.slice(2), nk: 1, T: 1 }, pi);
      ref.forEach((x, i) => expect(Math.abs(fast[i]! - x)).toBeLessThanOrEqual(1e-15 * (1 + Math.abs(x))));
    }
  });
});

describe("gainHeadroom", () => {
  it("equals the analytic critical gain of a first-order plant under P control: root 0.8 - 0.2 k kp reaches -1 at k kp = 9 (derived by hand)", () => {
    for (const kp of [0.5, 1, 3]) {
      const h = gainHeadroom({ a: [-0.8], b: [0.2], nk: 1, T: 1 }, discretePid({ kp, T: 1 }));
      expect(Math.abs(h - 9 / kp) / (9 / kp)).toBeLessThan(1e-9);
    }
  });

  it("equals the degree-2 stability triangle for one extra sample of delay: z^2 - 0.8 z + 0.2 k kp, limit 0.2 k kp = 1 (derived by hand)", () => {
    const h = gainHeadroom({ a: [-0.8], b: [0.2], nk: 2, T: 1 }, discretePid({ kp: 0.5, T: 1 }));
    expect(Math.abs(h - 10) / 10).toBeLessThan(1e-9);
  });

  it("puts the loop exactly on the boundary: radius < 1 just below k, > 1 just above (independent check with polyRoots)", () => {
    const plant = { a: [-1.5, 0.56], b: [0.05, 0.04], nk: 3, T: 0.5 };
    const ctrl = discretePid({ kp: 1.5, ti: 4, td: 0.5, T: 0.5 });
    const h = gainHeadroom(plant, ctrl);
    const scaled = (k: number): QTf => ({ ...ctrl, num: ctrl.num.map((x) => k * x) });
    expect(radius(closedLoopPolynomial(plant, scaled(h * (1 - 1e-6))))).toBeLessThan(1);
    expect(radius(closedLoopPolynomial(plant, scaled(h * (1 + 1e-6))))).toBeGreaterThan(1);
  });

  it("agrees with an independent scan of the spectral radius (polyRoots, k x 1.002 then bisection) on 150 seeded random loops, to 1e-6", () => {
    // mulberry32 (seeded PRNG, public-domain algorithm)
    let seed = 4242;
    const rand = (): number => {
      seed = (seed + 0x6d2b79f5) >>> 0;
      let t = seed;
      t = Math.imul(t ^ (t >>> 15), t | 1);
      t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
      return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
    };
    let compared = 0;
    while (compared < 150) {
      const p1 = 0.98 * rand();
      const p2 = 0.98 * rand();
      const plant = { a: [-(p1 + p2), p1 * p2], b: [0.1 * rand(), 0.1 * rand() - 0.02], nk: 1 + Math.floor(rand() * 4), T: 1 };
      if (plant.b[0]! + plant.b[1]! <= 0.01) continue;
      const ctrl = discretePid({ kp: 0.2 + 2 * rand(), ti: 2 + 30 * rand(), T: 1 });
      const rho = (k: number): number => radius(closedLoopPolynomial(plant, { ...ctrl, num: ctrl.num.map((x) => k * x) }));
      if (rho(1) >= 1) continue;
      let k = 1;
      while (rho(k * 1.002) < 1 && k < 1000) k *= 1.002;
      if (k >= 1000) continue;
      let lo = k;
      let hi = k * 1.002;
      for (let i = 0; i < 60; i++) {
        const mid = 0.5 * (lo + hi);
        if (rho(mid) < 1) lo = mid;
        else hi = mid;
      }
      const reference = 0.5 * (lo + hi);
      expect(Math.abs(gainHeadroom(plant, ctrl) - reference) / reference).toBeLessThan(1e-6);
      compared++;
    }
  });

  it("is below 1 for a loop already unstable, and Infinity when no gain destabilises", () => {
    const plant = { a: [-0.8], b: [0.2], nk: 3, T: 1 };
    const ctrl = discretePid({ kp: 100, T: 1 });
    const h = gainHeadroom(plant, ctrl);
    expect(h).toBeGreaterThan(0);
    expect(h).toBeLessThan(1);
    const scaled = (k: number): QTf => ({ ...ctrl, num: ctrl.num.map((x) => k * x) });
    expect(radius(closedLoopPolynomial(plant, scaled(h * 0.999)))).toBeLessThan(1);
    expect(radius(closedLoopPolynomial(plant, scaled(h * 1.001)))).toBeGreaterThan(1);
    // 0.1 (z - 0.5)/(z - 0.9) under P control: the pole moves from 0.9 toward 0.5 for every k > 0
    expect(gainHeadroom({ num: [0.1, -0.05], den: [1, -0.9], T: 1 }, discretePid({ kp: 1, T: 1 }))).toBe(Infinity);
  });
});
