/**
 * The rim-forecast oracle (tests/control/forecast-oracle.ts) is the efficient estimator of the
 * drift from the harness's samples, so it must show the standard properties of one (Ljung,
 * *System Identification*, 2nd ed., 1999, sec. 9.3; Söderström & Stoica, *System
 * Identification*, 1989, ch. 7; from memory): over many seeded runs its drift-rate estimate is
 * unbiased and its spread agrees with the Cramér–Rao bound from its own information matrix. 120
 * runs per scenario: the sample sd is within about ±6.5 % (1 / sqrt(2 N)) of the true sd, so the
 * 20 % band is about 3 of its sds; the bias check allows 3 standard errors. A noise model that
 * leaves the load out must NOT agree with its (then wrong) bound: that shows the check can fail.
 * The second oracle (forecast-oracle-arx.ts, the tracker's ARX model with the true noise filter)
 * must be consistent in closed loop, where ordinary least squares is not (a fact of the trade:
 * the equation error is coloured and fed back; Söderström & Stoica, 1989, ch. 7, from memory).
 */
import { describe, expect, it } from "vitest";
import { mean, normalCdf, oracleMc, sd } from "./forecast-oracle";
import { arxOracleRun } from "./forecast-oracle-arx";
import { makeSim } from "./forecast-tracker-mc";

describe("rim-forecast oracle", () => {
  it("normal distribution function at handbook points (Abramowitz & Stegun, table 26.1)", () => {
    expect(normalCdf(1.959964)).toBeCloseTo(0.975, 6);
    expect(normalCdf(-1)).toBeCloseTo(0.158655, 6);
    expect(normalCdf(0)).toBeCloseTo(0.5, 7);
  });

  for (const kind of ["linear-radius", "gain-creep"] as const) {
    it(`estimates the drift of the ${kind} run without bias and with the spread of the Cramér–Rao bound (120 runs)`, () => {
      const N = 120;
      const o = oracleMc(kind, N, 50000);
      expect(Math.abs(o.betaMean - 1)).toBeLessThan((3 * o.betaBoundSd) / Math.sqrt(N));
      expect(o.betaSd / o.betaBoundSd).toBeGreaterThan(0.8);
      expect(o.betaSd / o.betaBoundSd).toBeLessThan(1.2);
      // the remaining-time error: its sd within 20 % of the bound's (delta method)
      expect(o.errorSd / o.boundSd).toBeGreaterThan(0.8);
      expect(o.errorSd / o.boundSd).toBeLessThan(1.2);
    }, 60_000);
  }

  it("without the load in its noise model the fit's spread is far outside its bound", () => {
    const o = oracleMc("gain-creep", 40, 50000, undefined, false);
    expect(o.betaSd / o.betaBoundSd).toBeGreaterThan(5);
  }, 60_000);

  it("fits the tracker's ARX model of the gain creep without bias with the true noise filter, and with bias without it (120 runs)", () => {
    const N = 120;
    const sim = makeSim("gain-creep", 1);
    // first-order plant, gain 1, 20 s lag, T = 5 s: b = g (1 − e^(−T/20)), a1 = −e^(−T/20)
    const bUnit = 1 - Math.exp(-5 / 20);
    const truth = [-Math.exp(-5 / 20), bUnit * sim.gainFactor(18000), 0, (bUnit * (sim.gainFactor(36000) - 1)) / 36000];
    const fits = (whiten: boolean) => Array.from({ length: N }, (_, r) => arxOracleRun("gain-creep", 50000 + r, whiten).est!);
    const zOf = (list: ReturnType<typeof fits>, i: number) => {
      const v = list.map((e) => (i < 2 ? e.theta[i]! : e.rate[i - 2]!));
      return (mean(v) - truth[i]!) / (sd(v) / Math.sqrt(N));
    };
    const gls = fits(true);
    for (let i = 0; i < 4; i++) expect(Math.abs(zOf(gls, i))).toBeLessThan(3);
    expect(Math.abs(zOf(fits(false), 1))).toBeGreaterThan(10);
  }, 60_000);
});
