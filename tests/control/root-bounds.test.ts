/**
 * Roots with conditioning bounds (lib/control/root-bounds.ts) on clustered polynomials near z = 1,
 * against exact roots of the same double-precision coefficients computed in 60-digit decimal
 * arithmetic (tests/reference/roots60.py, Durand-Kerner in Python's `decimal`; fixture
 * tests/reference/fixtures/control-a.json, key `clusters`).
 */
import { readFileSync } from "node:fs";
import path from "node:path";
import { describe, expect, it } from "vitest";
import { polyRoots } from "@/lib/control/roots";
import { polyRootsWithBounds, rimVerdict } from "@/lib/control/root-bounds";
import { polyFromRoots } from "@/lib/control/poly";
import type { Complex } from "@/lib/control/types";

interface Cluster {
  name: string;
  coeffs: number[];
  roots: [number, number][];
}
const raw = JSON.parse(readFileSync(path.join(import.meta.dirname, "..", "reference", "fixtures", "control-a.json"), "utf8")) as {
  clusters: { name: string; coeffs: string[]; roots: [number, number][] }[];
};
// coefficients are stored as round-trip decimal strings (exact doubles)
const fixture: { clusters: Cluster[] } = { clusters: raw.clusters.map((c) => ({ ...c, coeffs: c.coeffs.map(Number) })) };
const mod = (z: Complex): number => Math.hypot(z.re, z.im);

describe("polyRootsWithBounds on clustered polynomials near z = 1 (60-digit references)", () => {
  it(`every root passes the stop test and every exact root lies in a computed root's disk (${fixture.clusters.length} polynomials)`, () => {
    let worstRatio = 0;
    for (const c of fixture.clusters) {
      const got = polyRootsWithBounds(c.coeffs);
      expect(got, c.name).toHaveLength(c.roots.length);
      for (const z of got) {
        expect(z.converged, `${c.name}: residual ${z.residual}`).toBe(true);
        // each computed root is within its own bound of an exact root
        const err = Math.min(...c.roots.map(([re, im]) => Math.hypot(z.re - re, z.im - im)));
        expect(err, `${c.name}: root ${z.re} ${z.im}`).toBeLessThanOrEqual(z.bound);
      }
      for (const [re, im] of c.roots) {
        // Gerschgorin-type inclusion: each exact root is within the bound of some computed root
        const slack = Math.min(...got.map((z) => Math.hypot(z.re - re, z.im - im) - z.bound));
        expect(slack, `${c.name}: exact root ${re} ${im}`).toBeLessThanOrEqual(0);
      }
      // spectral radius within the largest bound
      const rhoRef = Math.max(...c.roots.map(([re, im]) => Math.hypot(re, im)));
      const rho = Math.max(...got.map(mod));
      const maxBound = Math.max(...got.map((z) => z.bound));
      expect(Math.abs(rho - rhoRef), c.name).toBeLessThanOrEqual(maxBound);
      worstRatio = Math.max(worstRatio, Math.abs(rho - rhoRef) / maxBound);
    }
    expect(worstRatio).toBeLessThan(1);
  });

  it("the independent check's polynomial: spectral radius 1.0073 (60 digits) within the bound, bound of the cluster's size (not 0.16)", () => {
    const c = fixture.clusters[0]!;
    const got = polyRootsWithBounds(c.coeffs);
    const rho = Math.max(...got.map(mod));
    // the fault: a root at modulus 1.1608 that failed the stop test (relative residual 1.4e-9)
    expect(rho).toBeLessThan(1.05);
    expect(Math.abs(rho - 1.0073101259616635)).toBeLessThan(Math.max(...got.map((z) => z.bound)));
    expect(Math.max(...polyRoots(c.coeffs).map(mod))).toBeLessThan(1.05);
    // a rounding error in the coefficients moves these roots by ~5e-3: the bound says so, and the
    // verdict against the unit circle is "undecided" (the largest disk straddles |z| = 1)
    const dominant = got.reduce((a, b) => (mod(b) > mod(a) ? b : a));
    expect(dominant.bound).toBeGreaterThan(1e-3);
    expect(dominant.bound).toBeLessThan(0.1);
    expect(rimVerdict(got)).toBe("undecided");
  });

  it("well separated roots get bounds at the rounding level and a decided verdict", () => {
    const inside = polyRootsWithBounds(polyFromRoots([{ re: 0.9, im: 0 }, { re: 0.5, im: 0.3 }, { re: 0.5, im: -0.3 }, { re: -0.2, im: 0 }]));
    for (const z of inside) expect(z.bound).toBeLessThan(1e-13);
    expect(rimVerdict(inside)).toBe("inside");
    const outside = polyRootsWithBounds(polyFromRoots([{ re: 1.02, im: 0 }, { re: 0.5, im: 0 }, { re: 0.3, im: 0 }]));
    expect(rimVerdict(outside)).toBe("outside");
  });

  it("a coefficient uncertainty (e.g. from a covariance) widens the bounds; exact zero roots keep bound 0", () => {
    const c = polyFromRoots([{ re: 0.97, im: 0 }, { re: 0.6, im: 0 }]).concat([0]);
    const tight = polyRootsWithBounds(c);
    const wide = polyRootsWithBounds(c, { coefficientUncertainty: [0, 1e-2, 1e-2, 0] });
    expect(tight.find((z) => z.re === 0)!.bound).toBe(0);
    // first order: |dz| ~ |dp| / |p'(z)|; at z = 0.97, |dp| <= 1e-2 (|z| + 1) ~ 2e-2, |p'(0.97)| = 0.97 * 0.37 (hand-derived)
    expect(wide[0]!.bound).toBeGreaterThan(2e-2 / (0.97 * 0.37));
    expect(wide[0]!.bound).toBeGreaterThan(1e6 * tight[0]!.bound);
    expect(rimVerdict(wide)).toBe("undecided");
    expect(() => polyRootsWithBounds(c, { coefficientUncertainty: [0, 1] })).toThrow(/one entry per coefficient/);
  });
});
