/**
 * `poleCharacteristicsInto` (one caller-owned object, reused) against the allocating
 * `poleCharacteristics`: every field identical bit for bit (Object.is: -0, NaN, Infinity and null
 * included), over the roots of seeded closed loops (ARX plants under a PI, the tracker's
 * polynomial) and points of every location class, visited in an order that changes class from
 * one call to the next, so a field left over from the previous pole would show. The formulas
 * themselves are checked against published values in zplane.test.ts. Common practice (an
 * equivalence check); no external source.
 */
import { describe, expect, it } from "vitest";
import { closedLoopArxInto, discretePid } from "@/lib/control/closed-loop";
import { polyRootsInto } from "@/lib/control/roots";
import type { Complex } from "@/lib/control/types";
import { poleCharacteristics, poleCharacteristicsInto, type PoleCharacteristics } from "@/lib/control/zplane";
import { mulberry32 } from "@/tests/helpers/seeded-random";

const FIELDS: readonly (keyof PoleCharacteristics)[] = ["radius", "angle", "zeta", "wn", "timeConstant", "decayRatio", "kind", "stable", "continuousEquivalent"];

/** Roots of seeded closed loops: ARX(na, nb, nk) plants with random coefficients under a PI. */
function seededRoots(seed: number, loops: number): Complex[] {
  const rand = mulberry32(seed);
  const out: Complex[] = [];
  const coeffs = new Float64Array(16);
  const re = new Float64Array(16);
  const im = new Float64Array(16);
  for (let k = 0; k < loops; k++) {
    const na = 1 + Math.floor(rand() * 3);
    const nb = 1 + Math.floor(rand() * 3);
    const nk = 1 + Math.floor(rand() * 3);
    const theta = Float64Array.from({ length: na + nb }, (_, i) => (i < na ? 1.6 : 0.2) * (2 * rand() - 1));
    const pi = discretePid({ kp: 0.1 + 2 * rand(), ti: 2 + 40 * rand(), T: 1 });
    const len = closedLoopArxInto(theta, na, nb, nk, pi.num, pi.den, coeffs);
    const count = polyRootsInto(coeffs, re, im, len);
    for (let i = 0; i < count; i++) out.push({ re: re[i]!, im: im[i]! });
  }
  return out;
}

/** One point of each location class, and the edges between them. */
const SPECIAL: Complex[] = [
  { re: 0, im: 0 },
  { re: 1e-13, im: -1e-13 },
  { re: 1, im: 0 },
  { re: 1 + 5e-7, im: 2e-7 },
  { re: 0.5, im: 0 },
  { re: 0.5, im: -0 },
  { re: -0.7, im: 0 },
  { re: -1.2, im: 0 },
  { re: 1.3, im: 0 },
  { re: 0.6, im: 0.6 },
  { re: 0.6, im: -0.6 },
  { re: Math.cos(0.3), im: Math.sin(0.3) },
  { re: -0.2, im: 1e-13 },
  { re: 0.999, im: 0 },
];

describe("poleCharacteristicsInto", () => {
  it("writes exactly what poleCharacteristics returns, into one reused object (seeded closed-loop roots and every class)", () => {
    const roots = [...seededRoots(20261203, 400), ...SPECIAL];
    const order = mulberry32(7);
    // interleave the special points among the roots so the class changes between calls
    const points = roots.map((z) => [order(), z] as const).sort((a, b) => a[0] - b[0]).map(([, z]) => z);
    const kinds = new Set<string>();
    const out = poleCharacteristics({ re: 0.5, im: 0 }, 1);
    let compared = 0;
    for (const T of [1, 0.25, 7]) {
      for (const z of points) {
        const fresh = poleCharacteristics(z, T);
        const same = poleCharacteristicsInto(z, T, out);
        expect(same).toBe(out);
        for (const f of FIELDS) {
          if (!Object.is(same[f], fresh[f])) throw new Error(`${f} differs at z = ${z.re} + ${z.im}j, T = ${T}: ${same[f]} vs ${fresh[f]}`);
        }
        expect(Object.keys(same)).toEqual(Object.keys(fresh));
        kinds.add(fresh.kind);
        compared++;
      }
    }
    expect(kinds).toEqual(new Set(["origin", "integrator", "positive-real", "negative-real", "complex"]));
    expect(compared).toBeGreaterThan(3000);
  });

  it("leaves nothing of the previous pole: every ordered pair of the class points, each after the other", () => {
    const out = poleCharacteristics({ re: 0.5, im: 0 }, 1);
    let pairs = 0;
    for (const a of SPECIAL) {
      for (const b of SPECIAL) {
        poleCharacteristicsInto(a, 2, out);
        const fresh = poleCharacteristics(b, 2);
        poleCharacteristicsInto(b, 2, out);
        for (const f of FIELDS) {
          if (!Object.is(out[f], fresh[f])) throw new Error(`${f} differs at ${b.re} + ${b.im}j after ${a.re} + ${a.im}j: ${out[f]} vs ${fresh[f]}`);
        }
        pairs++;
      }
    }
    expect(pairs).toBe(SPECIAL.length * SPECIAL.length);
  });

  it("overwrites a field the previous pole set (a time constant, then a complex pole without one)", () => {
    const out = poleCharacteristicsInto({ re: 0.5, im: 0 }, 1, poleCharacteristics({ re: 0, im: 0 }, 1));
    expect(out.timeConstant).toBeCloseTo(1 / Math.LN2, 14);
    poleCharacteristicsInto({ re: 0.3, im: 0.4 }, 1, out);
    expect(out.timeConstant).toBeNull();
    expect(out.decayRatio).not.toBeNull();
  });

  it("throws as poleCharacteristics on a non-finite pole or a bad period", () => {
    const out = poleCharacteristics({ re: 0.5, im: 0 }, 1);
    expect(() => poleCharacteristicsInto({ re: NaN, im: 0 }, 1, out)).toThrow();
    expect(() => poleCharacteristicsInto({ re: 0.5, im: 0 }, 0, out)).toThrow();
  });
});
