import { describe, expect, it } from "vitest";
import { mapPolesToPeriod, proposeEstimationPeriod, WNT_RANGE } from "@/lib/control/sampling";
import { sToZ, zToS } from "@/lib/control/zplane";
import { AliasingError, ControlArgumentError, NonFiniteInputError } from "@/lib/control/errors";

describe("proposeEstimationPeriod (rule of thumb wn T ~ 0.1-0.6, Åström & Wittenmark 1997, from memory)", () => {
  it("decimates 1 s telemetry of a 100 s lag to put wn T inside the band", () => {
    const p = proposeEstimationPeriod({ from: "step-test", timeConstant: 100, deadTime: 20, telemetryPeriod: 1 });
    expect(Number.isInteger(p.factor)).toBe(true);
    expect(p.factor).toBeGreaterThan(10);
    expect(p.period).toBe(p.factor * 1);
    expect(p.wnT).toBeCloseTo(p.period / 100, 15);
    expect(p.wnT).toBeGreaterThanOrEqual(WNT_RANGE.low);
    expect(p.wnT).toBeLessThanOrEqual(WNT_RANGE.high);
    expect(p.reason).toMatch(/dead time/);
  });

  it("gives the same proposal from continuous poles, from the discrete poles at 1 s and from an ARX model", () => {
    const s = [{ re: -0.02, im: 0.03 }, { re: -0.02, im: -0.03 }, { re: -0.5, im: 0 }];
    const fromS = proposeEstimationPeriod({ from: "continuous-poles", poles: s, telemetryPeriod: 1 });
    const z = s.map((p) => sToZ(p, 1));
    const fromZ = proposeEstimationPeriod({ from: "discrete-poles", poles: z, T: 1 });
    expect(fromZ.factor).toBe(fromS.factor);
    expect(fromZ.wnT).toBeCloseTo(fromS.wnT, 10);
    // A(q) with those poles: z^3 + a1 z^2 + a2 z + a3
    const re = z[0]!.re;
    const m2 = z[0]!.re ** 2 + z[0]!.im ** 2;
    const r = z[2]!.re;
    const a = [-(2 * re + r), m2 + 2 * re * r, -m2 * r];
    const fromModel = proposeEstimationPeriod({ from: "model", model: { a, b: [0.1], nk: 1, T: 1 } });
    expect(fromModel.factor).toBe(fromS.factor);
    // dominant mode is the slow pair: wn = |s| = sqrt(0.02^2 + 0.03^2)
    expect(fromS.wnT / fromS.period).toBeCloseTo(Math.hypot(0.02, 0.03), 12);
  });

  it("keeps factor 1 and says why when the telemetry is already slow", () => {
    const p = proposeEstimationPeriod({ from: "step-test", timeConstant: 2, telemetryPeriod: 5 });
    expect(p.factor).toBe(1);
    expect(p.reason).toMatch(/already slow/);
  });

  it("ignores integrators, and refuses a basis with no other mode or bad numbers", () => {
    const p = proposeEstimationPeriod({ from: "continuous-poles", poles: [{ re: 0, im: 0 }, { re: -0.05, im: 0 }], telemetryPeriod: 0.5 });
    expect(p.wnT).toBeCloseTo(0.05 * p.period, 15);
    expect(() => proposeEstimationPeriod({ from: "continuous-poles", poles: [{ re: 0, im: 0 }], telemetryPeriod: 1 })).toThrow(
      ControlArgumentError,
    );
    expect(() => proposeEstimationPeriod({ from: "step-test", timeConstant: -3, telemetryPeriod: 1 })).toThrow(ControlArgumentError);
    expect(() => proposeEstimationPeriod({ from: "step-test", timeConstant: Number.NaN, telemetryPeriod: 1 })).toThrow(
      NonFiniteInputError,
    );
  });

  it("leaves out poles at the origin and on the negative real axis (no continuous equivalent)", () => {
    const p = proposeEstimationPeriod({ from: "discrete-poles", poles: [{ re: Math.exp(-0.01), im: 0 }, { re: -0.3, im: 0 }, { re: 0, im: 0 }], T: 1 });
    expect(p.wnT / p.period).toBeCloseTo(0.01, 12);
    expect(() => proposeEstimationPeriod({ from: "discrete-poles", poles: [{ re: -0.3, im: 0 }], T: 1 })).toThrow(ControlArgumentError);
  });

  it("respects maxFactor", () => {
    const p = proposeEstimationPeriod({ from: "step-test", timeConstant: 10_000, telemetryPeriod: 0.1 }, { maxFactor: 50 });
    expect(p.factor).toBe(50);
    expect(p.reason).toMatch(/capped/);
  });
});

describe("mapPolesToPeriod: z2 = z1^(T2/T1) (from z = e^{sT})", () => {
  it("agrees with going through the s-plane, and maps back", () => {
    const poles = [{ re: 0.9, im: 0.2 }, { re: 0.9, im: -0.2 }, { re: 0.5, im: 0 }, { re: 0, im: 0 }];
    const mapped = mapPolesToPeriod(poles, 1, 2.5);
    poles.forEach((z, i) => {
      if (z.re === 0 && z.im === 0) {
        expect(mapped[i]).toEqual({ re: 0, im: 0 });
        return;
      }
      const viaS = sToZ(zToS(z, 1), 2.5);
      expect(mapped[i]!.re).toBeCloseTo(viaS.re, 14);
      expect(mapped[i]!.im).toBeCloseTo(viaS.im, 14);
    });
    const back = mapPolesToPeriod(mapped, 2.5, 1);
    poles.forEach((z, i) => {
      expect(back[i]!.re).toBeCloseTo(z.re, 13);
      expect(back[i]!.im).toBeCloseTo(z.im, 13);
    });
  });

  it("throws AliasingError when |arg z| T2/T1 > pi, and for a negative-real pole at another period", () => {
    const z = { re: Math.cos(1), im: Math.sin(1) * 0.9 };
    expect(() => mapPolesToPeriod([z], 1, 4)).toThrow(AliasingError);
    expect(() => mapPolesToPeriod([z], 1, 3)).not.toThrow();
    expect(() => mapPolesToPeriod([{ re: -0.5, im: 0 }], 1, 2)).toThrow(AliasingError);
    expect(mapPolesToPeriod([{ re: -0.5, im: 0 }], 1, 1)[0]!.re).toBeCloseTo(-0.5, 15);
    expect(() => mapPolesToPeriod([z], 0, 1)).toThrow(ControlArgumentError);
  });
});
