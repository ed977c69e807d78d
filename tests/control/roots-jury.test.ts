import { describe, expect, it } from "vitest";
import { polyRoots, polyRootsInto, spectralRadius } from "@/lib/control/roots";
import { juryStable, juryTest } from "@/lib/control/jury";
import { polyEvalComplex, polyFromRoots } from "@/lib/control/poly";
import { ControlArgumentError, NonFiniteInputError } from "@/lib/control/errors";
import type { Complex } from "@/lib/control/types";
import { maxMatchError } from "./root-match";
import { mulberry32 } from "../helpers/seeded-random";


const abs = (z: Complex): number => Math.hypot(z.re, z.im);

/** Random roots of a real polynomial of the given degree: conjugate pairs and reals. */
function randomRoots(rand: () => number, degree: number, radius: () => number): Complex[] {
  const roots: Complex[] = [];
  while (roots.length < degree) {
    const r = radius();
    if (degree - roots.length >= 2 && rand() < 0.6) {
      const ang = 0.05 + rand() * (Math.PI - 0.1);
      roots.push({ re: r * Math.cos(ang), im: r * Math.sin(ang) }, { re: r * Math.cos(ang), im: -r * Math.sin(ang) });
    } else {
      roots.push({ re: rand() < 0.5 ? r : -r, im: 0 });
    }
  }
  return roots;
}

describe("polyRoots", () => {
  it("solves degree 1 and 2 in closed form, conjugate pairs exact", () => {
    expect(polyRoots([2, -1])).toEqual([{ re: 0.5, im: 0 }]);
    const r = polyRoots([1, -1.5, 0.7]);
    expect(r[0]!.re).toBe(r[1]!.re);
    expect(r[0]!.im).toBe(-r[1]!.im);
    // z^2 - 1.5 z + 0.7: roots 0.75 +- j sqrt(0.7 - 0.5625) (hand-derived)
    expect(r[0]!.re).toBeCloseTo(0.75, 15);
    expect(r[0]!.im).toBeCloseTo(Math.sqrt(0.7 - 0.5625), 15);
  });

  it("keeps the small root of z^2 - 1e8 z + 1 accurate (cancellation-free quadratic; Numerical Recipes sec. 5.6)", () => {
    const r = polyRoots([1, -1e8, 1]).map((z) => z.re).sort((a, b) => a - b);
    // roots 1e-8 (1 + 1e-16 + ...) and 1e8: relative error near machine epsilon
    expect(Math.abs(r[0]! - 1e-8) / 1e-8).toBeLessThan(1e-14);
    expect(Math.abs(r[1]! - 1e8) / 1e8).toBeLessThan(1e-14);
  });

  it("strips leading zeros and returns trailing-zero roots exactly", () => {
    const r = polyRoots([0, 0, 1, -1.5, 0.5, 0, 0]);
    expect(r).toHaveLength(4);
    expect(r.slice(2)).toEqual([{ re: 0, im: 0 }, { re: 0, im: 0 }]);
    expect(maxMatchError([{ re: 1, im: 0 }, { re: 0.5, im: 0 }], r.slice(0, 2))).toBeLessThan(1e-15);
    expect(polyRoots([3])).toEqual([]);
  });

  it("rebuilds its polynomial from the roots on 300 seeded random polynomials of degree 3-12", () => {
    const rand = mulberry32(7);
    for (let trial = 0; trial < 300; trial++) {
      const n = 3 + Math.floor(rand() * 10);
      const c = [1, ...Array.from({ length: n }, () => 2 * rand() - 1)];
      const roots = polyRoots(c);
      expect(roots).toHaveLength(n);
      const rebuilt = polyFromRoots(roots);
      const scale = c.reduce((s, x) => s + Math.abs(x), 0);
      for (let k = 0; k <= n; k++) expect(Math.abs(rebuilt[k]! - c[k]!)).toBeLessThan(1e-11 * scale);
      // exact conjugate closure
      for (const z of roots) {
        if (z.im !== 0) expect(roots.some((w) => w.re === z.re && w.im === -z.im)).toBe(true);
      }
    }
  });

  it("has backward error at the rounding level (|p(z)| / sum |c_k||z|^k below 1e-13) up to degree 64", () => {
    const rand = mulberry32(11);
    for (const n of [16, 32, 48, 64]) {
      const c = [1, ...Array.from({ length: n }, () => 2 * rand() - 1)];
      for (const z of polyRoots(c)) {
        const p = polyEvalComplex(c, z);
        const bound = c.reduce((s, x) => s * abs(z) + Math.abs(x), 0);
        expect(abs(p) / bound).toBeLessThan(1e-13);
      }
    }
  });

  it("finds multiple roots to about eps^(1/m) (the limit in double precision; factor 50 allowed)", () => {
    for (let m = 2; m <= 5; m++) {
      const expected: Complex[] = [...new Array<Complex>(m).fill({ re: 0.9, im: 0 }), { re: 0.3, im: 0 }];
      const got = polyRoots(polyFromRoots(expected));
      expect(maxMatchError(expected, got)).toBeLessThan(50 * Math.pow(2.22e-16, 1 / m));
    }
  });

  it("gives the same roots with a warm start as cold (tracker path)", () => {
    const re = new Float64Array(8);
    const im = new Float64Array(8);
    const coldRe = new Float64Array(8);
    const coldIm = new Float64Array(8);
    const c = new Float64Array([1, -2.2, 1.57, -0.36, 0.02]);
    polyRootsInto(c, re, im);
    for (let step = 0; step < 200; step++) {
      c[1] = -2.2 + 0.001 * step; // roots drift; a pair forms on the way
      const n = polyRootsInto(c, re, im, c.length, true);
      polyRootsInto(c, coldRe, coldIm);
      for (let i = 0; i < n; i++) {
        expect(Math.abs(re[i]! - coldRe[i]!)).toBeLessThan(1e-9);
        expect(Math.abs(im[i]! - coldIm[i]!)).toBeLessThan(1e-9);
      }
    }
  });

  it("solves cubics on the hot path (closed form + Newton polish) like the iteration, to the roots' conditioning", () => {
    const rand = mulberry32(99);
    const re = new Float64Array(3);
    const im = new Float64Array(3);
    for (let trial = 0; trial < 2000; trial++) {
      // chosen roots: a pair or three reals, sometimes clustered near z = 1 (fast sampling)
      const cluster = rand() < 0.3;
      const pick = (): number => (cluster ? 1 - 0.05 * rand() : 1.8 * rand() - 0.9);
      const roots: Complex[] =
        rand() < 0.5
          ? [{ re: pick(), im: 0 }, { re: pick(), im: 0 }, { re: pick(), im: 0 }]
          : (() => {
              const x = pick();
              const y = (cluster ? 0.02 : 0.8) * rand();
              return [{ re: x, im: y }, { re: x, im: -y }, { re: pick(), im: 0 }];
            })();
      const c = polyFromRoots(roots);
      expect(polyRootsInto(c, re, im)).toBe(3);
      const fast: Complex[] = [0, 1, 2].map((i) => ({ re: re[i]!, im: im[i]! }));
      const slow = polyRoots(c);
      // allowed difference per root: the perturbation bound of 100 eps sum|c_k||z|^k coefficient
      // noise for a root alone (/|p'(z)|), in a close pair (sqrt(./|z - z_far|)) or a triple (cube root),
      // whichever is smallest (Wilkinson-type bounds); at least 1e-12
      let tol = 1e-12;
      for (const z of roots) {
        const r = Math.hypot(z.re, z.im);
        const noise = 100 * 2.22e-16 * c.reduce((s, x) => s * r + Math.abs(x), 0);
        const d = roots.filter((w) => w !== z).map((w) => Math.hypot(z.re - w.re, z.im - w.im)).sort((x, y) => x - y);
        const single = noise / (d[0]! * d[1]!);
        const pair = Math.sqrt(noise / d[1]!);
        const triple = Math.cbrt(noise);
        tol = Math.max(tol, Math.min(single, pair, triple));
      }
      expect(maxMatchError(slow, fast)).toBeLessThan(tol);
      expect(maxMatchError(roots, fast)).toBeLessThan(tol);
    }
  });

  it("orders roots by descending modulus with conjugate pairs adjacent", () => {
    const r = polyRoots([1, 0, 0, 0, -1]); // z^4 = 1
    for (let i = 1; i < r.length; i++) expect(abs(r[i - 1]!)).toBeGreaterThanOrEqual(abs(r[i]!) - 1e-15);
    const pairIdx = r.findIndex((z) => z.im > 0);
    expect(r[pairIdx + 1]!.im).toBe(-r[pairIdx]!.im);
    expect(spectralRadius([1, -1.5, 0.7])).toBeCloseTo(Math.sqrt(0.7), 15);
  });

  it("rejects the zero polynomial and non-finite coefficients with named errors", () => {
    expect(() => polyRoots([0, 0])).toThrow(ControlArgumentError);
    expect(() => polyRoots([])).toThrow(ControlArgumentError);
    expect(() => polyRoots([1, Number.NaN, 2])).toThrow(NonFiniteInputError);
    expect(() => polyRootsInto([1, 2, 3], new Float64Array(1), new Float64Array(1))).toThrow(ControlArgumentError);
  });
});

describe("juryTest", () => {
  it("reproduces the hand-computed table of z^2 - 1.5 z + 0.7 (Åström & Wittenmark 1997 sec. 3.2 recursion)", () => {
    const r = juryTest([1, -1.5, 0.7]);
    expect(r.stable).toBe(true);
    // alpha_2 = 0.7: a^(1) = [1 - 0.49, -1.5 + 0.7 * 1.5] = [0.51, -0.45]
    // alpha_1 = -0.45 / 0.51: a^(0) = [0.51 - 0.45^2 / 0.51]
    expect(r.table).toHaveLength(5);
    expect(r.table[0]).toEqual([1, -1.5, 0.7]);
    expect(r.table[1]).toEqual([0.7, -1.5, 1]);
    expect(r.table[2]![0]).toBeCloseTo(0.51, 15);
    expect(r.table[2]![1]).toBeCloseTo(-0.45, 15);
    expect(r.table[4]![0]).toBeCloseTo(0.51 - (0.45 * 0.45) / 0.51, 14);
    const names = r.conditions.map((c) => c.name);
    expect(names).toEqual(["P(1) > 0", "(-1)^n P(-1) > 0", "|a_n| < a_0", "a_0^(1) > 0", "a_0^(0) > 0"]);
    expect(r.conditions[0]!.value).toBeCloseTo(0.2, 15); // P(1) = 1 - 1.5 + 0.7
    expect(r.conditions[1]!.value).toBeCloseTo(3.2, 15); // P(-1) = 1 + 1.5 + 0.7
  });

  it("does not call a root on the unit circle stable (integrator, z = -1, pair on the circle)", () => {
    expect(juryTest([1, -1]).stable).toBe(false); // z = 1
    expect(juryTest([1, 1]).stable).toBe(false); // z = -1
    expect(juryTest([1, 0, 1]).stable).toBe(false); // z = +-j
    expect(juryTest([1, -1.5, 0.5]).stable).toBe(false); // (z - 1)(z - 0.5)
    expect(juryTest(polyFromRoots([{ re: Math.cos(0.3), im: Math.sin(0.3) }, { re: Math.cos(0.3), im: -Math.sin(0.3) }, { re: 0.2, im: 0 }])).stable).toBe(false);
  });

  it("normalises a0 < 0 by sign and reports a failing necessary condition by name", () => {
    expect(juryTest([-1, 1.5, -0.7]).stable).toBe(true);
    const r = juryTest([1, -2.5, 1]); // roots 2 and 0.5
    expect(r.stable).toBe(false);
    expect(r.conditions.find((c) => c.name === "P(1) > 0")!.ok).toBe(false);
  });

  it("matches the degree-2 stability triangle |a2| < 1, |a1| < 1 + a2 on 2,000 seeded cases (common practice)", () => {
    const rand = mulberry32(3);
    for (let i = 0; i < 2000; i++) {
      const a1 = 4 * rand() - 2;
      const a2 = 2.4 * rand() - 1.2;
      const triangle = Math.abs(a2) < 1 && Math.abs(a1) < 1 + a2;
      if (Math.abs(Math.abs(a2) - 1) < 1e-9 || Math.abs(Math.abs(a1) - 1 - a2) < 1e-9) continue;
      expect(juryTest([1, a1, a2]).stable).toBe(triangle);
    }
  });

  it("agrees with max|root| < 1 of the chosen roots on 1,200 seeded polynomials of degree 1-8, many within 1e-3 of the circle", () => {
    const rand = mulberry32(2026);
    let near = 0;
    let stableCount = 0;
    let checked = 0;
    while (checked < 1200) {
      const degree = 1 + Math.floor(rand() * 8);
      const closeToCircle = rand() < 0.5;
      const radius = (): number => (closeToCircle && rand() < 0.5 ? 1 + (2 * rand() - 1) * 1e-3 : 1.3 * rand());
      const roots = randomRoots(rand, degree, radius);
      const distances = roots.map((z) => Math.abs(abs(z) - 1));
      if (Math.min(...distances) < 1e-9) continue; // numerically undecidable
      const truth = Math.max(...roots.map(abs)) < 1;
      const scale = rand() < 0.5 ? 1 : -2.5; // a0 < 0 must not change the verdict
      const c = polyFromRoots(roots).map((x) => x * scale);
      const verdict = juryTest(c);
      expect(verdict.stable).toBe(truth);
      expect(juryStable(c)).toBe(truth);
      // the necessary conditions never contradict a stable verdict
      if (verdict.stable) expect(verdict.conditions.every((x) => x.ok)).toBe(true);
      if (Math.min(...distances) < 1e-3) near++;
      if (truth) stableCount++;
      checked++;
    }
    expect(near).toBeGreaterThan(300);
    expect(stableCount).toBeGreaterThan(200);
    expect(checked - stableCount).toBeGreaterThan(200);
  });

  it("cubics (the tracker's case, written-out conditions): a root exactly on the circle is not stable, and the verdict matches the roots on 2,000 seeded cubics", () => {
    // Exact on-circle cubics: a root at z = 1, at z = -1, and the pair z = +-j (every coefficient
    // exact in binary, so the verdict is decided on the boundary itself).
    const onCircle = [
      polyFromRoots([{ re: 1, im: 0 }, { re: 0.5, im: 0 }, { re: -0.25, im: 0 }]),
      polyFromRoots([{ re: -1, im: 0 }, { re: 0.5, im: 0 }, { re: 0.25, im: 0 }]),
      [1, -0.5, 1, -0.5], // (z^2 + 1)(z - 0.5)
    ];
    for (const c of onCircle) {
      expect(juryStable(c), JSON.stringify(c)).toBe(false);
      expect(juryStable(c.map((x) => -2 * x)), JSON.stringify(c)).toBe(false);
      expect(juryTest(c).stable).toBe(false);
    }
    const rand = mulberry32(77);
    let stableCount = 0;
    for (let i = 0; i < 2000; i++) {
      const roots = randomRoots(rand, 3, () => (rand() < 0.5 ? 1 + (2 * rand() - 1) * 1e-3 : 1.3 * rand()));
      if (Math.min(...roots.map((z) => Math.abs(abs(z) - 1))) < 1e-9) continue;
      const truth = Math.max(...roots.map(abs)) < 1;
      const c = polyFromRoots(roots);
      expect(juryStable(c)).toBe(truth);
      expect(juryStable(c.map((x) => -0.4 * x))).toBe(truth);
      if (truth) stableCount++;
    }
    expect(stableCount).toBeGreaterThan(300);
  });

  it("rejects degree 0, the zero polynomial and non-finite input with named errors", () => {
    expect(() => juryTest([5])).toThrow(ControlArgumentError);
    expect(() => juryTest([0, 0, 0])).toThrow(ControlArgumentError);
    expect(() => juryTest([])).toThrow(ControlArgumentError);
    expect(() => juryTest([1, Number.POSITIVE_INFINITY])).toThrow(NonFiniteInputError);
    expect(() => juryStable([0, 3])).toThrow(ControlArgumentError);
  });
});
