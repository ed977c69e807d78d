import { describe, expect, it } from "vitest";
import { forecastCrossing, studentQuantile } from "@/lib/control/forecast";
import { ControlArgumentError, NonFiniteInputError } from "@/lib/control/errors";
import { mulberry32, normal } from "../helpers/seeded-random";
import { forecastDrift } from "./coverage-mc";

/** Points every dt seconds: value = v0 + slope t + AR(1) noise (phi, innovation sd). */
function series(seed: number, n: number, dt: number, v0: number, slope: number, phi: number, sd: number) {
  const randn = normal(mulberry32(seed));
  let e = (sd / Math.sqrt(1 - phi * phi)) * randn();
  const pts: { t: number; value: number }[] = [];
  for (let i = 0; i < n; i++) {
    const t = i * dt;
    pts.push({ t, value: v0 + slope * t + e });
    e = phi * e + sd * randn();
  }
  return pts;
}

describe("forecastCrossing", () => {
  it("finds the exact crossing of a noise-free line, with a zero-width interval", () => {
    // value = 0.90 + 1e-5 t reaches 0.95 at t = 5000 s (arithmetic).
    const pts = Array.from({ length: 100 }, (_, i) => ({ t: i * 10, value: 0.9 + 1e-5 * i * 10 }));
    const f = forecastCrossing(pts, 0.95, { minSpan: 600 })!;
    expect(f).not.toBeNull();
    expect(f.at).toBeCloseTo(5000, 6);
    expect(f.low).toBeCloseTo(5000, 6);
    expect(f.high).toBeCloseTo(5000, 6);
    expect(f.slope).toBeCloseTo(1e-5, 15);
  });

  it("brackets the crossing of a noisy trend: low < at < high, near the true time", () => {
    const pts = series(3, 600, 5, 0.9, 2e-5, 0.5, 0.002);
    const f = forecastCrossing(pts, 0.98, { memory: 50 })!;
    // True crossing (0.98 - 0.90) / 2e-5 = 4000 s.
    expect(f.low).toBeLessThan(f.at);
    expect(f.at).toBeLessThan(f.high);
    expect(f.low).toBeLessThan(4000);
    expect(f.high).toBeGreaterThan(4000);
    expect(f.tStat).toBeGreaterThan(1.96);
  });

  it("returns null for a flat series, a trend moving away, a short span, too few points, or a far horizon", () => {
    expect(forecastCrossing(series(4, 600, 5, 0.9, 0, 0.5, 0.002), 0.98)).toBeNull();
    expect(forecastCrossing(series(5, 600, 5, 0.9, -2e-5, 0.5, 0.002), 0.98)).toBeNull();
    const rising = series(6, 600, 5, 0.9, 2e-5, 0.5, 0.002);
    expect(forecastCrossing(rising, 0.98, { minSpan: 10_000 })).toBeNull();
    expect(forecastCrossing(rising.slice(0, 10), 0.98, { minSpan: 1 })).toBeNull();
    expect(forecastCrossing(rising, 0.98, { maxHorizon: 100 })).toBeNull();
    expect(forecastCrossing(rising, 0.98, { memory: 1000 })).toBeNull(); // minSpan defaults to 10 x memory
    expect(forecastCrossing([], 0.98)).toBeNull();
  });

  it("uses only the window when one is given", () => {
    // Flat for 3000 s, then rising: the full series is dominated by the flat part, the window is not.
    const pts = Array.from({ length: 800 }, (_, i) => {
      const t = i * 5;
      return { t, value: 0.9 + (t > 3000 ? 5e-5 * (t - 3000) : 0) + 1e-4 * Math.sin(i) };
    });
    const f = forecastCrossing(pts, 0.98, { window: 900, minSpan: 600 })!;
    // Rising part: 0.90 + 5e-5 (t - 3000) reaches 0.98 at t = 4600 s.
    expect(Math.abs(f.at - 4600)).toBeLessThan(5);
  });

  it("its interval keeps near-nominal coverage under autocorrelated noise, also when asked for HAC lag 0 (Monte Carlo, 300 runs)", () => {
    // Newey & West (1987): HAC standard errors; with AR(1) residuals (phi = 0.8) the i.i.d. formula
    // understates the slope's variance by about (1 + phi)/(1 - phi) = 9x (common practice).
    const runs = 300;
    const truth = (0.98 - 0.9) / 2e-5;
    let hac = 0;
    let naive = 0;
    let hacRuns = 0;
    let naiveRuns = 0;
    for (let r = 0; r < runs; r++) {
      const pts = series(1000 + r, 500, 5, 0.9, 2e-5, 0.8, 0.003);
      // the series' own memory: phi = 0.8 per 5 s point is e^(-5 / 22.4)
      const a = forecastCrossing(pts, 0.98, { memory: 22.4, minSpan: 600 });
      const b = forecastCrossing(pts, 0.98, { lag: 0, minSpan: 600 });
      if (a) {
        hacRuns++;
        if (truth >= a.low && truth <= a.high) hac++;
      }
      if (b) {
        naiveRuns++;
        if (truth >= b.low && truth <= b.high) naive++;
      }
    }
    expect(hacRuns).toBeGreaterThan(250);
    expect(hac / hacRuns).toBeGreaterThan(0.85);
    expect(hac / hacRuns).toBeLessThan(0.995);
    // lag 0 (i.i.d. HAC) would cover < 80 %; the AR(1) floor from the residuals' own lag-1
    // correlation keeps even that call near nominal
    expect(naive / naiveRuns).toBeGreaterThan(0.85);
  });

  it("tracker-like drift (radius 0.90 -> 1.0 over 10 h, memory 200 s, 4,000 s window), at half way: 95 % interval covers 90-97 %, >= 80 % within 15 %; no drift: no forecast in >= 95 % (Monte Carlo, 300 runs)", () => {
    // the radius estimate's error is AR(1) with the estimator's memory (RLS with forgetting:
    // theta~(k) ~ lambda theta~(k-1) + ...; common practice), sd 0.001, a point every 5.5 s
    const { forecasts, coverage, within15, quiet } = forecastDrift(300, 0.001, 5000);
    // measured before the AR(1) floor: coverage 69 % (Bartlett lag of one memory)
    expect(forecasts).toBeGreaterThan(290);
    expect(coverage).toBeGreaterThanOrEqual(0.9);
    expect(coverage).toBeLessThanOrEqual(0.97);
    expect(within15).toBeGreaterThanOrEqual(0.8);
    expect(quiet).toBeGreaterThanOrEqual(0.95);
  });

  it("with every sd equal, the weighted fit is the unweighted one (weights only rescale)", () => {
    const pts = series(11, 600, 5, 0.9, 2e-5, 0.5, 0.002);
    const a = forecastCrossing(pts, 0.98, { memory: 50 })!;
    const b = forecastCrossing(pts.map((p) => ({ ...p, sd: 0.004 })), 0.98, { memory: 50 })!;
    expect(a).not.toBeNull();
    for (const k of ["at", "low", "high", "slope", "slopeStd", "effectivePoints"] as const) expect(b[k]).toBeCloseTo(a[k], 9);
  });

  it("delay moves a noise-free crossing back by exactly the delay", () => {
    // value = 0.90 + 1e-5 t reaches 0.95 at t = 5000 s; read 300 s late it is 4700 s (arithmetic)
    const pts = Array.from({ length: 100 }, (_, i) => ({ t: i * 10, value: 0.9 + 1e-5 * i * 10 }));
    const f = forecastCrossing(pts, 0.95, { minSpan: 600, delay: 300 })!;
    expect(f.at).toBeCloseTo(4700, 6);
    expect(f.low).toBeCloseTo(4700, 6);
    expect(f.high).toBeCloseTo(4700, 6);
  });

  it("weighting by each point's own sd narrows the spread and keeps the interval honest when the noise level changes along the window (Monte Carlo, 300 runs)", () => {
    // Inverse-variance weights give the best linear unbiased trend under heteroskedastic noise
    // (Gauss-Markov / weighted least squares; Draper & Smith, Applied Regression Analysis, 3rd ed.,
    // 1998, ch. 9). Here the first third of the window is 4x noisier, as a just-converged estimator is.
    const runs = 300;
    const truth = (0.98 - 0.9) / 2e-5;
    const errW: number[] = [];
    const errU: number[] = [];
    let covered = 0;
    let forecasts = 0;
    for (let r = 0; r < runs; r++) {
      const randn = normal(mulberry32(7000 + r));
      const phi = Math.exp(-5 / 50);
      let e = randn();
      const pts: { t: number; value: number; sd: number }[] = [];
      for (let i = 0; i < 600; i++) {
        const t = i * 5;
        const sd = t < 1000 ? 0.008 : 0.002;
        pts.push({ t, value: 0.9 + 2e-5 * t + sd * e, sd });
        e = phi * e + Math.sqrt(1 - phi * phi) * randn();
      }
      const w = forecastCrossing(pts, 0.98, { memory: 50 });
      const u = forecastCrossing(pts.map(({ t, value }) => ({ t, value })), 0.98, { memory: 50 });
      if (w) {
        forecasts++;
        errW.push(w.at - truth);
        if (truth >= w.low && truth <= w.high) covered++;
      }
      if (u) errU.push(u.at - truth);
    }
    const rms = (x: number[]) => Math.sqrt(x.reduce((a, v) => a + v * v, 0) / x.length);
    expect(forecasts).toBeGreaterThan(290);
    expect(rms(errW)).toBeLessThan(0.8 * rms(errU));
    expect(covered / forecasts).toBeGreaterThanOrEqual(0.9);
    expect(covered / forecasts).toBeLessThanOrEqual(0.99);
  });

  it.each([
    [{ t: 0, value: 1, sd: 0 }, ControlArgumentError],
    [{ t: 0, value: 1, sd: -1 }, ControlArgumentError],
    [{ t: 0, value: 1, sd: NaN }, NonFiniteInputError],
    [{ t: 0, value: 1, sd: Infinity }, NonFiniteInputError],
  ])("refuses a point sd that is not a positive number (%#)", (p, type) => {
    expect(() => forecastCrossing([p], 1)).toThrow(type);
  });

  it("refuses a negative or non-finite delay", () => {
    expect(() => forecastCrossing([], 1, { delay: -1 })).toThrow(ControlArgumentError);
    expect(() => forecastCrossing([], 1, { delay: NaN })).toThrow(ControlArgumentError);
  });

  it("studentQuantile matches scipy.stats.t.ppf(0.975, nu) (Debian python3-scipy) within 0.5 % for nu >= 3", () => {
    const ref: [number, number][] = [[3, 3.182446305284263], [5, 2.570581835636314], [10, 2.228138851986274], [20, 2.085963447265837], [60, 2.000297821058261]];
    for (const [nu, t] of ref) expect(Math.abs(studentQuantile(0.975, nu) - t) / t).toBeLessThan(0.005);
  });

  it.each([
    [[{ t: 0, value: NaN }], NonFiniteInputError],
    [[{ t: 0, value: 1 }, { t: 0, value: 1 }], ControlArgumentError],
    [[{ t: 5, value: 1 }, { t: 1, value: 1 }], ControlArgumentError],
  ])("refuses bad points (%#)", (pts, type) => {
    expect(() => forecastCrossing(pts, 1)).toThrow(type);
  });

  it("refuses a non-finite level and a bad confidence", () => {
    expect(() => forecastCrossing([], NaN)).toThrow(NonFiniteInputError);
    expect(() => forecastCrossing([], 1, { confidence: 1 })).toThrow(ControlArgumentError);
  });
});
