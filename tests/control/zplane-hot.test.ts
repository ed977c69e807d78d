import { describe, expect, it } from "vitest";
import { decayRatio, dominantPoleInto, newDominantPoleFigures, poleCharacteristics } from "@/lib/control/zplane";
import { polyRootsInto } from "@/lib/control/roots";
import { polyFromRoots } from "@/lib/control/poly";
import type { Complex } from "@/lib/control/types";
import { mulberry32 } from "../helpers/seeded-random";

/** Rounding-level agreement: relative 1e-12, or absolute 1e-12 near zero. */
function close(a: number, b: number): boolean {
  if (Number.isNaN(a) || Number.isNaN(b)) return Number.isNaN(a) && Number.isNaN(b);
  if (!Number.isFinite(a) || !Number.isFinite(b)) return a === b;
  return Math.abs(a - b) <= 1e-12 * Math.max(1, Math.abs(a), Math.abs(b));
}

describe("dominantPoleInto (hot path of the tracker)", () => {
  it("pole pair 0.9 e^{+-j pi/4} at T = 0.5 s: wn 1.58487 rad/s, zeta 0.132958, decay ratio 0.9^8 = 0.43046721 (numpy: abs(log z)/T, -Re/abs)", () => {
    const re = Float64Array.from([0.9 * Math.cos(Math.PI / 4), 0.9 * Math.cos(Math.PI / 4), 0.2]);
    const im = Float64Array.from([0.9 * Math.sin(Math.PI / 4), -0.9 * Math.sin(Math.PI / 4), 0]);
    const out = dominantPoleInto(re, im, 3, 0.5, newDominantPoleFigures());
    expect(out.index).toBe(0);
    expect(out.radius).toBeCloseTo(0.9, 14);
    expect(out.wn).toBeCloseTo(1.5848673298768798, 12);
    expect(out.zeta).toBeCloseTo(0.1329581519811014, 12);
    expect(out.decayRatio).toBeCloseTo(0.43046721, 12);
    expect(Number.isNaN(out.timeConstant)).toBe(true);
  });

  it("cubic z^3 - 2.558 z^2 + 2.2352 z - 0.674 (numpy.roots: 0.970055, 0.793973 +- 0.253798j): real dominant pole, decay ratio from the pair", () => {
    const re = new Float64Array(3);
    const im = new Float64Array(3);
    const n = polyRootsInto([1, -2.558, 2.2352, -0.674], re, im);
    const out = dominantPoleInto(re, im, n, 1, newDominantPoleFigures());
    expect(out.radius).toBeCloseTo(0.97005451, 7);
    expect(out.timeConstant).toBeCloseTo(-1 / Math.log(0.97005451), 4); // tau = -T / ln z
    const pair = Math.hypot(0.79397275, 0.25379834);
    expect(out.decayRatio).toBeCloseTo(Math.pow(pair, (2 * Math.PI) / Math.atan2(0.25379834, 0.79397275)), 6);
  });

  it("agrees with poleCharacteristics and decayRatio to rounding on 2000 seeded random root sets, with origin, integrator and negative-real cases", () => {
    const rand = mulberry32(20261201);
    const re = new Float64Array(6);
    const im = new Float64Array(6);
    const out = newDominantPoleFigures();
    let complexDominant = 0;
    let realDominant = 0;
    for (let trial = 0; trial < 2000; trial++) {
      let n = 0;
      const pairs = Math.floor(rand() * 3);
      for (let p = 0; p < pairs; p++) {
        const r = 1.2 * rand();
        const th = Math.PI * rand();
        re[n] = r * Math.cos(th);
        im[n++] = r * Math.sin(th);
        re[n] = r * Math.cos(th);
        im[n++] = -r * Math.sin(th);
      }
      const reals = 1 + Math.floor(rand() * 2);
      for (let k = 0; k < reals; k++) {
        const pick = rand();
        re[n] = pick < 0.05 ? 0 : pick < 0.1 ? 1 : pick < 0.2 ? -rand() : 2.4 * rand() - 1.2;
        im[n++] = 0;
      }
      dominantPoleInto(re, im, n, 0.25, out);
      // reference: the contract functions on every root, largest modulus first of equals
      let dom = 0;
      let osc = -1;
      for (let k = 0; k < n; k++) {
        if (Math.hypot(re[k]!, im[k]!) > Math.hypot(re[dom]!, im[dom]!)) dom = k;
        if (im[k]! > 0 && (osc < 0 || Math.hypot(re[k]!, im[k]!) > Math.hypot(re[osc]!, im[osc]!))) osc = k;
      }
      const pc = poleCharacteristics({ re: re[dom]!, im: im[dom]! }, 0.25);
      if (pc.kind === "complex") complexDominant++;
      else realDominant++;
      expect(close(out.radius, pc.radius)).toBe(true);
      expect(close(out.zeta, pc.zeta)).toBe(true);
      expect(close(out.wn, pc.wn)).toBe(true);
      expect(close(out.timeConstant, pc.timeConstant ?? NaN)).toBe(true);
      const dr = osc < 0 ? null : decayRatio({ re: re[osc]!, im: im[osc]! });
      expect(close(out.decayRatio, dr ?? NaN)).toBe(true);
    }
    expect(complexDominant).toBeGreaterThan(100);
    expect(realDominant).toBeGreaterThan(100);
  });

  it("no roots: index -1 and NaN figures", () => {
    const out = dominantPoleInto(new Float64Array(0), new Float64Array(0), 0, 1, newDominantPoleFigures());
    expect(out.index).toBe(-1);
    expect(Number.isNaN(out.radius)).toBe(true);
  });
});

/** Largest distance between two 3-root sets under their best pairing (all 6 permutations). */
function matchError3(a: Complex[], b: Complex[]): number {
  const perms = [[0, 1, 2], [0, 2, 1], [1, 0, 2], [1, 2, 0], [2, 0, 1], [2, 1, 0]];
  let best = Infinity;
  for (const p of perms) best = Math.min(best, Math.max(...p.map((j, i) => Math.hypot(a[i]!.re - b[j]!.re, a[i]!.im - b[j]!.im))));
  return best;
}

describe("polyRootsInto warm start on cubics (previous real root seeds Newton)", () => {
  it("agrees with a cold solve to the roots' conditioning along 200 seeded random walks of the roots, across pair/real transitions", () => {
    const rand = mulberry32(4242);
    const warmRe = new Float64Array(3);
    const warmIm = new Float64Array(3);
    const coldRe = new Float64Array(3);
    const coldIm = new Float64Array(3);
    let transitions = 0;
    for (let walk = 0; walk < 200; walk++) {
      // a pair x +- j y (y may go negative: then two reals x +- |y| ... handled by building from the discriminant) and a real r
      let x = 1.6 * rand() - 0.8;
      let y = 0.4 * rand() - 0.1;
      let r = 1.8 * rand() - 0.9;
      let first = true;
      let wasComplex = y > 0;
      for (let k = 0; k < 100; k++) {
        x += 0.004 * (rand() - 0.5);
        y += 0.004 * (rand() - 0.5);
        r += 0.004 * (rand() - 0.5);
        const roots: Complex[] = y > 0 ? [{ re: x, im: y }, { re: x, im: -y }, { re: r, im: 0 }] : [{ re: x + y, im: 0 }, { re: x - y, im: 0 }, { re: r, im: 0 }];
        if (y > 0 !== wasComplex) transitions++;
        wasComplex = y > 0;
        const c = polyFromRoots(roots);
        expect(polyRootsInto(c, warmRe, warmIm, c.length, !first)).toBe(3);
        first = false;
        polyRootsInto(c, coldRe, coldIm);
        const warm = [0, 1, 2].map((i) => ({ re: warmRe[i]!, im: warmIm[i]! }));
        const cold = [0, 1, 2].map((i) => ({ re: coldRe[i]!, im: coldIm[i]! }));
        // per-root perturbation bound for 100 eps coefficient noise (single / close pair / triple), at least 1e-12
        let tol = 1e-12;
        for (const z of roots) {
          const m = Math.hypot(z.re, z.im);
          const noise = 100 * 2.22e-16 * c.reduce((s, v) => s * m + Math.abs(v), 0);
          const d = roots.filter((w) => w !== z).map((w) => Math.hypot(z.re - w.re, z.im - w.im)).sort((p, q) => p - q);
          tol = Math.max(tol, Math.min(noise / (d[0]! * d[1]!), Math.sqrt(noise / d[1]!), Math.cbrt(noise)));
        }
        expect(matchError3(warm, cold)).toBeLessThan(tol);
        expect(matchError3(warm, roots)).toBeLessThan(tol);
      }
    }
    expect(transitions).toBeGreaterThan(5);
  });
});

