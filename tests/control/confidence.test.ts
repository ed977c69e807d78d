import { describe, expect, it } from "vitest";
import { eigs } from "mathjs";
import { ArxEstimator } from "@/lib/control/arx";
import { closedLoopCoefficientCovariance, normalQuantile, poleConfidence } from "@/lib/control/confidence";
import { ControlArgumentError, PeriodMismatchError } from "@/lib/control/errors";
import type { ArxModel, QTf } from "@/lib/control/types";
import { mulberry32, normal } from "../helpers/seeded-random";

/** Plain convolution of two coefficient lists (test-side, from the definition). */
function conv(p: number[], q: number[]): number[] {
  const out = new Array<number>(p.length + q.length - 1).fill(0);
  p.forEach((a, i) => q.forEach((b, j) => (out[i + j]! += a * b)));
  return out;
}

describe("normalQuantile", () => {
  it.each([
    // Standard normal table values (any statistics handbook, e.g. Abramowitz & Stegun 1964, table 26.5).
    [0.975, 1.959963985],
    [0.95, 1.644853627],
    [0.995, 2.575829304],
    [0.5, 0],
    [0.01, -2.326347874],
  ])("Phi^-1(%f) = %f to 1e-8", (p, z) => {
    expect(Math.abs(normalQuantile(p) - z)).toBeLessThan(1e-8);
  });
  it("refuses p outside (0, 1)", () => {
    expect(() => normalQuantile(1)).toThrow(ControlArgumentError);
  });
});

describe("poleConfidence (delta method)", () => {
  it("gives sd|z| = sd(c2) / (2 r) for a complex pair of z^2 + c1 z + c2 (|z|^2 = c2 by Vieta)", () => {
    // For a complex pair |z|^2 = c2 / c0 (Vieta's formulas), so d|z|/dc2 = 1/(2 sqrt(c2)) and d|z|/dc1 = 0.
    const r = 0.9;
    const th = 0.4;
    const coeffs = [1, -2 * r * Math.cos(th), r * r];
    const cov = [
      [4e-4, 1e-4],
      [1e-4, 9e-4],
    ];
    const [p1, p2] = poleConfidence(coeffs, cov);
    expect(p1!.radius).toBeCloseTo(r, 12);
    expect(Math.abs(p1!.radiusStd - Math.sqrt(9e-4) / (2 * r))).toBeLessThan(1e-12);
    expect(Math.abs(p2!.radiusStd - p1!.radiusStd)).toBeLessThan(1e-12);
    expect(p1!.reliable).toBe(true);
  });

  it("matches finite differences of the roots for a cubic (full (n+1) x (n+1) covariance)", () => {
    // Independent check of dz/dc by perturbing each coefficient and re-solving with the closed-form
    // roots of a factored cubic (z - 0.5)(z^2 - 1.2 z + 0.61): roots 0.5 and 0.6 +- 0.5j.
    const coeffs = conv([1, -0.5], [1, -1.2, 0.61]);
    const h = 1e-7;
    const var0 = 2.5e-5;
    // With cov = var0 * e_k e_k' the radius variance is var0 (d|z|/dc_k)^2.
    for (let k = 0; k < 4; k++) {
      const cov = Array.from({ length: 4 }, (_, i) => Array.from({ length: 4 }, (_, j) => (i === k && j === k ? var0 : 0)));
      const res = poleConfidence(coeffs, cov);
      const plus = [...coeffs];
      plus[k]! += h;
      const minus = [...coeffs];
      minus[k]! -= h;
      const rp = poleConfidence(plus, cov);
      const rm = poleConfidence(minus, cov);
      res.forEach((root, i) => {
        const d = (rp[i]!.radius - rm[i]!.radius) / (2 * h);
        expect(Math.abs(root.radiusStd - Math.sqrt(var0) * Math.abs(d))).toBeLessThan(1e-6);
      });
    }
  });

  it("flags a near-repeated root as unreliable and a well separated one as reliable", () => {
    const close = poleConfidence(conv([1, -0.5], [1, -0.5001]), [
      [1e-6, 0],
      [0, 1e-6],
    ]);
    expect(close.every((r) => !r.reliable)).toBe(true);
    const apart = poleConfidence(conv([1, -0.5], [1, -0.9]), [
      [1e-6, 0],
      [0, 1e-6],
    ]);
    expect(apart.every((r) => r.reliable)).toBe(true);
  });

  it.each([
    [[1], [[1]], "degree"],
    [[1, -0.5, 0.1], [[1]], "covariance"],
    [[0, 1, 0.5], [[1, 0], [0, 1]], "leading"],
  ])("refuses bad input %j", (c, cov, word) => {
    expect(() => poleConfidence(c, cov)).toThrow(word);
  });

  it("95 % radius intervals cover the true radius 90-98 % of the time (Monte Carlo, 400 runs, lambda = 1, no guard)", () => {
    // A = 1 - 1.5 q^-1 + 0.7 q^-2: poles 0.75 +- 0.3708j, true radius sqrt(0.7) (Vieta).
    const trueR = Math.sqrt(0.7);
    const randn = normal(mulberry32(4242));
    const runs = 400;
    let covered = 0;
    let ellipseCovered = 0;
    const trueZ = { re: 0.75, im: Math.sqrt(0.7 - 0.75 * 0.75) };
    for (let r = 0; r < runs; r++) {
      const est = new ArxEstimator({ na: 2, nb: 2, nk: 1, forgetting: 1, windup: "none", operatingPoint: "none", gating: "none", initialCovariance: 1e4 });
      let y1 = 0, y2 = 0, u1 = 0, u2 = 0;
      for (let k = 0; k < 500; k++) {
        const u = randn();
        const y = 1.5 * y1 - 0.7 * y2 + 0.5 * u1 + 0.3 * u2 + 0.3 * randn();
        est.push(u, y);
        y2 = y1; y1 = y; u2 = u1; u1 = u;
      }
      const m = est.model();
      const cov = est.parameterCovariance();
      const aCov = [
        [cov[0]![0]!, cov[0]![1]!],
        [cov[1]![0]!, cov[1]![1]!],
      ];
      const roots = poleConfidence([1, ...m.a], aCov);
      const upper = roots.find((p) => p.root.im > 0)!;
      if (trueR >= upper.radiusInterval[0] && trueR <= upper.radiusInterval[1]) covered++;
      // Ellipse check: Mahalanobis distance of the true pole under the (Re, Im) covariance vs chi2(2) at 95 %.
      const [[vrr, vri], [, vii]] = upper.covariance;
      const dx = trueZ.re - upper.root.re;
      const dy = trueZ.im - upper.root.im;
      const det = vrr * vii - vri * vri;
      const d2 = (vii * dx * dx - 2 * vri * dx * dy + vrr * dy * dy) / det;
      if (d2 <= -2 * Math.log(0.05)) ellipseCovered++;
    }
    expect(covered / runs).toBeGreaterThanOrEqual(0.9);
    expect(covered / runs).toBeLessThanOrEqual(0.98);
    expect(ellipseCovered / runs).toBeGreaterThanOrEqual(0.9);
    expect(ellipseCovered / runs).toBeLessThanOrEqual(0.98);
  });
});

describe("closedLoopCoefficientCovariance", () => {
  const plant: ArxModel = { a: [-1.5, 0.7], b: [0.5, 0.3], nk: 1, T: 2 };
  // Velocity-form PI (docs/domain.md §3): N = Kp[(1 + T/Ti) - q^-1], D = 1 - q^-1; Kp = 0.4, Ti = 10 s.
  const kp = 0.4;
  const pi: QTf = { num: [kp * (1 + 2 / 10), -kp], den: [1, -1], T: 2 };

  it("forms A D + q^-nk B N and its exact Jacobian", () => {
    const cov = [
      [1e-4, 0, 0, 0],
      [0, 1e-4, 0, 0],
      [0, 0, 1e-4, 0],
      [0, 0, 0, 1e-4],
    ];
    const out = closedLoopCoefficientCovariance(plant, pi, cov);
    const ad = conv([1, ...plant.a], pi.den);
    const bn = [0, ...conv(plant.b, pi.num)];
    const expected = ad.map((v, i) => v + (bn[i] ?? 0));
    out.coeffs.forEach((v, i) => expect(v).toBeCloseTo(expected[i]!, 14));
    // Linear in theta: a finite difference of the coefficients equals the Jacobian column exactly.
    const theta = [...plant.a, ...plant.b];
    theta.forEach((_, k) => {
      const t2 = [...theta];
      t2[k]! += 0.01;
      const moved = closedLoopCoefficientCovariance({ a: t2.slice(0, 2), b: t2.slice(2), nk: 1, T: 2 }, pi, cov).coeffs;
      moved.forEach((v, i) => expect((v - out.coeffs[i]!) / 0.01).toBeCloseTo(out.jacobian[i]![k]!, 10));
    });
    // Leading coefficient is fixed (variance 0); diagonal positive elsewhere.
    expect(out.covariance[0]![0]).toBe(0);
    expect(out.covariance[1]![1]).toBeGreaterThan(0);
  });

  it("closed-loop pole radius intervals from identified data cover the truth 90-98 % of the time (Monte Carlo, 300 runs)", () => {
    // Plant A = 1 - 1.5 q^-1 + 0.7 q^-2, B = 0.5 + 0.3 q^-1 (nk = 1) under the PI above, set-point
    // steps, white equation error (ARX is consistent in closed loop then; Ljung 1999, sec. 13.4).
    // True closed-loop poles: eigenvalues (mathjs) of the companion matrix of A D + q^-1 B N formed
    // here by convolution.
    const truePoly = conv([1, ...plant.a], pi.den).map((v, i) => v + ([0, ...conv(plant.b, pi.num)][i] ?? 0));
    const n = truePoly.length - 1;
    const companion = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (i === 0 ? -truePoly[j + 1]! / truePoly[0]! : i === j + 1 ? 1 : 0)));
    const ev = (eigs(companion, { eigenvectors: false } as never).values as unknown as (number | { re: number; im: number })[]).map((x) =>
      typeof x === "number" ? Math.abs(x) : Math.hypot(x.re, x.im),
    );
    const trueRho = Math.max(...ev);
    const randn = normal(mulberry32(999));
    const runs = 300;
    let covered = 0;
    let counted = 0;
    for (let r = 0; r < runs; r++) {
      const est = new ArxEstimator({ na: 2, nb: 2, nk: 1, T: 2, forgetting: 1, windup: "none", operatingPoint: "none", gating: "none", initialCovariance: 1e4 });
      let y1 = 0, y2 = 0, u1 = 0, u2 = 0, e1 = 0;
      for (let k = 0; k < 600; k++) {
        const y = 1.5 * y1 - 0.7 * y2 + 0.5 * u1 + 0.3 * u2 + 0.05 * randn();
        const sp = Math.floor(k / 30) % 2 === 0 ? 1 : -1;
        const e = sp - y;
        const u = u1 + pi.num[0]! * e + pi.num[1]! * e1;
        est.push(u, y);
        y2 = y1; y1 = y; u2 = u1; u1 = u; e1 = e;
      }
      const cc = closedLoopCoefficientCovariance(est.model(), pi, est.parameterCovariance());
      const conf = poleConfidence(cc.coeffs, cc.covariance);
      const dominant = conf.reduce((b, c) => (c.radius > b.radius ? c : b));
      if (!dominant.reliable) continue;
      counted++;
      if (trueRho >= dominant.radiusInterval[0] && trueRho <= dominant.radiusInterval[1]) covered++;
    }
    expect(counted).toBeGreaterThan(250);
    expect(covered / counted).toBeGreaterThanOrEqual(0.9);
    expect(covered / counted).toBeLessThanOrEqual(0.98);
  });

  it("refuses a plant and a controller sampled at different periods", () => {
    expect(() => closedLoopCoefficientCovariance(plant, { ...pi, T: 1 }, [[1]])).toThrow(PeriodMismatchError);
  });
});
