import { describe, expect, it } from "vitest";
import {
  dampingLocus,
  decayRatio,
  naturalFrequencyLocus,
  poleCharacteristics,
  sToZ,
  zToS,
} from "@/lib/control/zplane";
import { ControlArgumentError, NonFiniteInputError } from "@/lib/control/errors";
import type { Complex } from "@/lib/control/types";

/** Continuous pole of a second-order mode: s = wn(-zeta + j sqrt(1 - zeta^2)). */
const sPole = (zeta: number, wn: number): Complex => ({ re: -zeta * wn, im: wn * Math.sqrt(1 - zeta * zeta) });

describe("z = e^{sT} mapping", () => {
  it("maps sT = -0.05 to z = 0.951 (first-order approximation 1 + sT = 0.95; common practice)", () => {
    const z = sToZ({ re: -0.05, im: 0 }, 1);
    expect(z.re).toBeCloseTo(Math.exp(-0.05), 15);
    expect(z.re).toBeCloseTo(0.951, 3);
    expect(Math.abs(z.re - 0.95)).toBeLessThan(0.0013);
  });

  it("inverts: zToS(sToZ(s)) = s on the principal strip |Im s T| < pi", () => {
    for (const s of [sPole(0.3, 2), { re: -1, im: 0 }, { re: 0.2, im: -3 }, { re: -0.01, im: 0.5 }]) {
      const back = zToS(sToZ(s, 0.4), 0.4);
      expect(back.re).toBeCloseTo(s.re, 12);
      expect(back.im).toBeCloseTo(s.im, 12);
    }
  });

  it("keeps full relative accuracy for |z - 1| < 1e-5 (reference: the Taylor series of ln(1 + w), common practice)", () => {
    // z = 1 + w; Re ln z = Re(w - w^2/2 + w^3/3 - w^4/4), truncation below 1e-25 relative for |w| < 1e-5
    const seriesRe = (a: number, b: number): number => {
      let re = 0;
      let pr = 1;
      let pi = 0;
      for (let k = 1; k <= 6; k++) {
        const t = pr * a - pi * b;
        pi = pr * b + pi * a;
        pr = t;
        re += ((k % 2 === 1 ? 1 : -1) * pr) / k;
      }
      return re;
    };
    let worst = 0;
    for (const [a, b] of [[-3e-6, 1e-6], [1e-7, -4e-8], [-7.5e-9, 0], [2e-6, 5e-6], [-1e-10, 3e-11], [4e-6, -6e-6]] as const) {
      const s = zToS({ re: 1 + a, im: b }, 2);
      // the reference uses the w that 1 + a actually holds in binary
      const ref = seriesRe(1 + a - 1, b) / 2;
      worst = Math.max(worst, Math.abs(s.re - ref) / Math.abs(ref));
    }
    expect(worst).toBeLessThan(1e-13);
  });

  it("crowds every pole toward z = 1 as T -> 0 (common practice)", () => {
    const poles = [sPole(0.2, 5), { re: -0.1, im: 0 }, { re: -20, im: 0 }];
    for (const s of poles) {
      let previous = Infinity;
      for (const T of [0.1, 0.01, 0.001, 0.0001]) {
        const z = sToZ(s, T);
        const d = Math.hypot(z.re - 1, z.im);
        expect(d).toBeLessThan(previous);
        previous = d;
      }
      expect(previous).toBeLessThan(0.01);
    }
  });

  it("puts the integrator s = 0 at z = 1 (common practice) and classes it `integrator`, not stable", () => {
    expect(sToZ({ re: 0, im: 0 }, 2)).toEqual({ re: 1, im: 0 });
    const c = poleCharacteristics({ re: 1, im: 0 }, 1);
    expect(c.kind).toBe("integrator");
    expect(c.stable).toBe(false);
    expect(c.timeConstant).toBeNull();
  });
});

describe("poleCharacteristics", () => {
  it("recovers zeta and wn of a sampled second-order mode (z = e^{sT}; Franklin, Powell & Workman 1998 ch. 4)", () => {
    for (const [zeta, wn, T] of [
      [0.5, 2, 0.1],
      [0.1, 0.3, 1],
      [0.9, 10, 0.02],
    ] as const) {
      const c = poleCharacteristics(sToZ(sPole(zeta, wn), T), T);
      expect(c.kind).toBe("complex");
      expect(c.zeta).toBeCloseTo(zeta, 12);
      expect(c.wn).toBeCloseTo(wn, 10);
      expect(c.stable).toBe(true);
      // decay ratio exp(-2 pi zeta / sqrt(1 - zeta^2)) (docs/domain.md §1)
      expect(c.decayRatio!).toBeCloseTo(Math.exp((-2 * Math.PI * zeta) / Math.sqrt(1 - zeta * zeta)), 12);
      expect(c.continuousEquivalent).toBe(true);
    }
  });

  it("gives tau = -T/ln z for a real pole (z = e^{-T/tau})", () => {
    const c = poleCharacteristics({ re: Math.exp(-0.5 / 20), im: 0 }, 0.5);
    expect(c.kind).toBe("positive-real");
    expect(c.timeConstant!).toBeCloseTo(20, 10);
    expect(c.decayRatio).toBeNull();
    expect(c.zeta).toBeCloseTo(1, 15);
    expect(c.wn).toBeCloseTo(1 / 20, 12);
  });

  it("classes the origin (deadbeat: tau = 0, zeta = 1) and says it has no continuous equivalent", () => {
    const c = poleCharacteristics({ re: 0, im: 0 }, 1);
    expect(c).toMatchObject({ kind: "origin", timeConstant: 0, zeta: 1, wn: Infinity, stable: true, continuousEquivalent: false });
  });

  it("flags a negative-real pole as ringing at the Nyquist frequency with decay ratio r^2 per period 2T", () => {
    const c = poleCharacteristics({ re: -0.6, im: 0 }, 1);
    expect(c.kind).toBe("negative-real");
    expect(c.continuousEquivalent).toBe(false);
    expect(c.decayRatio!).toBeCloseTo(0.36, 15);
    expect(c.timeConstant).toBeNull();
    expect(c.wn).toBeCloseTo(Math.hypot(Math.log(0.6), Math.PI), 14);
  });

  it("reports a pole outside the circle as unstable with negative zeta", () => {
    const c = poleCharacteristics({ re: 0.9, im: 0.6 }, 1);
    expect(c.stable).toBe(false);
    expect(c.zeta).toBeLessThan(0);
    expect(c.decayRatio!).toBeGreaterThan(1);
  });

  it("rejects non-finite poles and non-positive periods", () => {
    expect(() => poleCharacteristics({ re: Number.NaN, im: 0 }, 1)).toThrow(NonFiniteInputError);
    expect(() => poleCharacteristics({ re: 0.5, im: 0 }, 0)).toThrow(ControlArgumentError);
    expect(() => zToS({ re: 0.5, im: 0 }, -1)).toThrow(ControlArgumentError);
  });
});

describe("decayRatio", () => {
  it("links quarter-amplitude decay (0.25) to zeta ~ 0.215 (common practice)", () => {
    const z = sToZ(sPole(0.215, 1), 0.2);
    expect(decayRatio(z)!).toBeCloseTo(0.25, 2);
    // and the exact zeta for 0.25: ln 4 / sqrt(4 pi^2 + ln^2 4) = 0.2154
    const zeta = Math.log(4) / Math.sqrt(4 * Math.PI * Math.PI + Math.log(4) ** 2);
    expect(zeta).toBeCloseTo(0.215, 3);
    expect(decayRatio(sToZ(sPole(zeta, 1), 0.2))!).toBeCloseTo(0.25, 12);
  });

  it("does not depend on the sample period (docs/domain.md §1)", () => {
    const s = sPole(0.3, 1.5);
    const ratios = [0.05, 0.2, 0.8, 1.5].map((T) => decayRatio(sToZ(s, T))!);
    for (const r of ratios) expect(r).toBeCloseTo(ratios[0]!, 12);
  });

  it("is 1 on the unit circle and null for non-oscillating poles", () => {
    expect(decayRatio({ re: Math.cos(0.7), im: Math.sin(0.7) })!).toBeCloseTo(1, 14);
    expect(decayRatio({ re: 0.5, im: 0 })).toBeNull();
    expect(decayRatio({ re: 0, im: 0 })).toBeNull();
    expect(decayRatio({ re: 1, im: 0 })).toBeNull();
  });
});

describe("loci", () => {
  it("constant-damping locus: every point has that zeta; from z = 1 to the negative real axis", () => {
    const pts = dampingLocus(0.4, 50);
    expect(pts).toHaveLength(50);
    expect(pts[0]).toEqual({ re: 1, im: 0 });
    expect(pts[49]!.im).toBeCloseTo(0, 12);
    expect(pts[49]!.re).toBeLessThan(0);
    for (const z of pts.slice(1, -1)) {
      expect(z.im).toBeGreaterThan(0);
      expect(poleCharacteristics(z, 1).zeta).toBeCloseTo(0.4, 12);
    }
    for (const z of dampingLocus(0, 9)) expect(Math.hypot(z.re, z.im)).toBeCloseTo(1, 15);
  });

  it("constant-wn locus: every point has that wn T; from the unit circle (zeta 0) to the real axis (zeta 1)", () => {
    const pts = naturalFrequencyLocus(1.2, 30);
    expect(Math.hypot(pts[0]!.re, pts[0]!.im)).toBeCloseTo(1, 15);
    expect(pts[29]!.re).toBeCloseTo(Math.exp(-1.2), 15);
    expect(pts[29]!.im).toBeCloseTo(0, 15);
    for (const z of pts.slice(0, -1)) expect(poleCharacteristics(z, 0.5).wn * 0.5).toBeCloseTo(1.2, 12);
  });

  it("rejects out-of-range arguments with ControlArgumentError", () => {
    expect(() => dampingLocus(1, 10)).toThrow(ControlArgumentError);
    expect(() => dampingLocus(-0.1, 10)).toThrow(ControlArgumentError);
    expect(() => dampingLocus(0.5, 1)).toThrow(ControlArgumentError);
    expect(() => naturalFrequencyLocus(0, 10)).toThrow(ControlArgumentError);
    expect(() => naturalFrequencyLocus(3.2, 10)).toThrow(ControlArgumentError);
    expect(() => naturalFrequencyLocus(1, 2.5)).toThrow(ControlArgumentError);
  });
});
