/**
 * Seeded Monte Carlo runs of the estimators' interval coverage, shared by the tests in
 * tests/control and the coverage table of `npm run bench` (tests/bench/coverage-table.ts).
 * Truths are the simulated systems themselves; see each function.
 */
import { ArxEstimator } from "@/lib/control/arx";
import { poleConfidence } from "@/lib/control/confidence";
import { forecastCrossing } from "@/lib/control/forecast";
import { InstrumentalArxEstimator } from "@/lib/control/riv";
import { polyRoots } from "@/lib/control/roots";
import { mulberry32, normal } from "../helpers/seeded-random";

/**
 * ArxEstimator with its defaults (lambda 0.995, directional forgetting): share of runs whose 95 %
 * radius interval holds sqrt(0.7), the radius of A = 1 - 1.5 q^-1 + 0.7 q^-2 (Vieta); B = 0.5 + 0.3 q^-1,
 * white MV, white equation error sd 0.3.
 */
export function arxRadiusCoverage(runs: number, samples: number, seed: number): number {
  const trueR = Math.sqrt(0.7);
  const randn = normal(mulberry32(seed));
  let covered = 0;
  for (let t = 0; t < runs; t++) {
    const est = new ArxEstimator({ na: 2, nb: 2, nk: 1 });
    let y1 = 0, y2 = 0, u1 = 0, u2 = 0;
    for (let k = 0; k < samples; k++) {
      const u = randn();
      const y = 1.5 * y1 - 0.7 * y2 + 0.5 * u1 + 0.3 * u2 + 0.3 * randn();
      est.push(u, y);
      y2 = y1; y1 = y; u2 = u1; u1 = u;
    }
    const cov = est.parameterCovariance();
    const aCov = [
      [cov[0]![0]!, cov[0]![1]!],
      [cov[1]![0]!, cov[1]![1]!],
    ];
    const upper = poleConfidence([1, ...est.model().a], aCov).find((p) => p.root.im > 0);
    if (upper && trueR >= upper.radiusInterval[0] && trueR <= upper.radiusInterval[1]) covered++;
  }
  return covered / runs;
}

/**
 * The IV estimator in manual (open loop, white MV, white PV noise `noise`), same plant as above:
 * 95 % radius-interval coverage and the 95th percentile and worst radius error.
 */
export function ivOpenLoop(runs: number, samples: number, noise: number, seed: number): { coverage: number; p95: number; worst: number } {
  const truth = Math.sqrt(0.7);
  const errors: number[] = [];
  let covered = 0;
  for (let t = 0; t < runs; t++) {
    const g = normal(mulberry32(seed + t));
    const est = new InstrumentalArxEstimator({ na: 2, nb: 2, nk: 1 });
    const y0 = [0, 0];
    const uh = [0, 0];
    for (let k = 0; k < samples; k++) {
      const yk = 1.5 * y0[0]! - 0.7 * y0[1]! + 0.5 * uh[0]! + 0.3 * uh[1]!;
      const uk = g();
      est.push(uk, yk + noise * g(), 0, "open");
      y0[1] = y0[0]!;
      y0[0] = yk;
      uh[1] = uh[0]!;
      uh[0] = uk;
    }
    const c = [1, ...est.model().a];
    const cov = est.parameterCovariance().slice(0, 2).map((row) => row.slice(0, 2));
    const dom = poleConfidence(c, cov, { roots: polyRoots(c) }).reduce((p, q) => (q.radius > p.radius ? q : p));
    errors.push(Math.abs(dom.radius - truth));
    if (dom.radiusInterval[0] <= truth && truth <= dom.radiusInterval[1]) covered++;
  }
  errors.sort((p, q) => p - q);
  return { coverage: covered / runs, p95: errors[Math.floor(0.95 * runs)]!, worst: errors[runs - 1]! };
}

/**
 * Rim forecast on a tracker-like radius series: truth 0.90 -> 1.0 over 10 h (crossing at
 * 36,000 s), estimation error AR(1) with the estimator's memory (200 s) and sd `sd`, a point every
 * 5.5 s, 4,000 s window; evaluated at half way (18,000 s). Also a flat series at 0.95 (no drift).
 */
export function forecastDrift(runs: number, sd: number, seed: number): { forecasts: number; coverage: number; within15: number; quiet: number } {
  const memory = 200;
  const dt = 5.5;
  const slope = 0.1 / 36000;
  let forecasts = 0, covered = 0, within = 0, quiet = 0;
  for (let r = 0; r < runs; r++) {
    const g = normal(mulberry32(seed + r));
    const rho = Math.exp(-dt / memory);
    const innov = sd * Math.sqrt(1 - rho * rho);
    let e = sd * g();
    let e0 = sd * g();
    const drift: { t: number; value: number }[] = [];
    const flat: { t: number; value: number }[] = [];
    for (let t = 0; t <= 18000; t += dt) {
      drift.push({ t, value: 0.9 + slope * t + e });
      flat.push({ t, value: 0.95 + e0 });
      e = rho * e + innov * g();
      e0 = rho * e0 + innov * g();
    }
    const f = forecastCrossing(drift, 1, { memory, window: 4000 });
    if (f) {
      forecasts++;
      if (f.low <= 36000 && 36000 <= f.high) covered++;
      if (Math.abs(f.at - 36000) <= 0.15 * 18000) within++;
    }
    if (!forecastCrossing(flat, 1, { memory, window: 4000 })) quiet++;
  }
  return { forecasts, coverage: forecasts ? covered / forecasts : NaN, within15: within / runs, quiet: quiet / runs };
}
