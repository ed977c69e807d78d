import { describe, expect, it } from "vitest";
import { polyRootsInto } from "@/lib/control/roots";
import { polyFromRoots } from "@/lib/control/poly";
import type { Complex } from "@/lib/control/types";
import { mulberry32 } from "../helpers/seeded-random";

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

