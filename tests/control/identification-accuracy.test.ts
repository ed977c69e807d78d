/**
 * Closed-loop identification accuracy: a plant under a velocity-form PI, simulated in state space
 * here in the test; true poles are eigenvalues (mathjs `eigs`) of the simulated system's own
 * matrices, never values from the code under test.
 */
import { describe, expect, it } from "vitest";
import { eigs } from "mathjs";
import { ArxEstimator } from "@/lib/control/arx";
import { closedLoopPolynomial, discretePid } from "@/lib/control/closed-loop";
import { polyRoots } from "@/lib/control/roots";
import { poleConfidence } from "@/lib/control/confidence";
import type { Complex } from "@/lib/control/types";
import { mulberry32, normal } from "../helpers/seeded-random";

const T = 2; // s
// Plant: an oscillatory second-order process in state space (invented example).
const PHI = [
  [0.85, -0.15],
  [0.15, 0.85],
];
const GAMMA = [0.2, 0.05];
const C = [0, 1];
// Velocity-form PI, docs/domain.md §3: N = Kp[(1 + T/Ti) - q^-1], D = 1 - q^-1.
const KP = 0.6;
const TI = 12; // s
const G = KP * (1 + T / TI);

function eigenvalues(m: number[][]): Complex[] {
  const v = eigs(m, { eigenvectors: false } as never).values as unknown as (number | { re: number; im: number })[];
  return v.map((x) => (typeof x === "number" ? { re: x, im: 0 } : { re: x.re, im: x.im }));
}

/** True plant poles: eig(PHI). */
const truePlant = eigenvalues(PHI);
/**
 * True closed-loop poles: states [x(k); v(k)] with v(k) = u(k-1) - Kp e(k-1), so that
 * u(k) = v(k) + G e(k), v(k+1) = v(k) + (G - Kp) e(k), e = r - C x:
 *   x(k+1) = (PHI - G GAMMA C) x + GAMMA v,   v(k+1) = -(G - Kp) C x + v   (+ terms in r).
 */
const CL = [
  [PHI[0]![0]! - G * GAMMA[0]! * C[0]!, PHI[0]![1]! - G * GAMMA[0]! * C[1]!, GAMMA[0]!],
  [PHI[1]![0]! - G * GAMMA[1]! * C[0]!, PHI[1]![1]! - G * GAMMA[1]! * C[1]!, GAMMA[1]!],
  [-(G - KP) * C[0]!, -(G - KP) * C[1]!, 1],
];
const trueClosed = eigenvalues(CL);

/**
 * Simulate the loop. The disturbance enters in innovations form so that the plant's I/O relation
 * is exactly ARX (equation error, the structure the estimator assumes): observer canonical form of
 * (PHI, GAMMA, C) with noise gain K = -[a1; a2], y = x1 + e (Ljung 1999, sec. 4.3).
 */
function simulate(opts: { n: number; seed: number; noiseStd: number; setPoint: (k: number) => number; ditherStd: number }) {
  // Characteristic polynomial z^2 + a1 z + a2 of PHI (definition: a1 = -trace, a2 = det).
  const a1 = -(PHI[0]![0]! + PHI[1]![1]!);
  const a2 = PHI[0]![0]! * PHI[1]![1]! - PHI[0]![1]! * PHI[1]![0]!;
  // Markov parameters h1 = C GAMMA, h2 = C PHI GAMMA give b0 = h1, b1 = h2 + a1 h1.
  const h1 = C[0]! * GAMMA[0]! + C[1]! * GAMMA[1]!;
  const pg = [PHI[0]![0]! * GAMMA[0]! + PHI[0]![1]! * GAMMA[1]!, PHI[1]![0]! * GAMMA[0]! + PHI[1]![1]! * GAMMA[1]!];
  const h2 = C[0]! * pg[0]! + C[1]! * pg[1]!;
  const b0 = h1;
  const b1 = h2 + a1 * h1;
  const randn = normal(mulberry32(opts.seed));
  const dither = normal(mulberry32(opts.seed + 7777));
  let x1 = 0;
  let x2 = 0;
  let uPrev = 0;
  let ePrev = 0;
  const u: number[] = [];
  const y: number[] = [];
  for (let k = 0; k < opts.n; k++) {
    const e = opts.noiseStd * randn();
    const yk = x1 + e;
    const r = opts.setPoint(k);
    const err = r - yk;
    const uk = uPrev + G * err - KP * ePrev + opts.ditherStd * dither();
    u.push(uk);
    y.push(yk);
    // Observer canonical form: x1(k+1) = -a1 x1 + x2 + b0 u - a1 e, x2(k+1) = -a2 x1 + b1 u - a2 e.
    const nx1 = -a1 * x1 + x2 + b0 * uk - a1 * e;
    const nx2 = -a2 * x1 + b1 * uk - a2 * e;
    x1 = nx1;
    x2 = nx2;
    uPrev = uk;
    ePrev = err;
  }
  return { u, y };
}

/** Noise std giving a 20 dB output SNR: the loop is linear, so signal and noise parts add. */
function noiseFor20dB(setPoint: (k: number) => number, ditherStd: number, n: number, seed: number): number {
  const clean = simulate({ n, seed, noiseStd: 0, setPoint, ditherStd });
  const noisy = simulate({ n, seed, noiseStd: 1, setPoint, ditherStd });
  const variance = (v: number[]) => {
    const m = v.reduce((s, x) => s + x, 0) / v.length;
    return v.reduce((s, x) => s + (x - m) ** 2, 0) / v.length;
  };
  const noisePart = noisy.y.map((v, i) => v - clean.y[i]!);
  return Math.sqrt(variance(clean.y) / 100 / variance(noisePart));
}

/** Best one-to-one matching (all permutations; degree <= 4). */
function match(est: Complex[], truth: Complex[]): [Complex, Complex][] {
  const perms = (a: number[]): number[][] => (a.length <= 1 ? [a] : a.flatMap((x, i) => perms([...a.slice(0, i), ...a.slice(i + 1)]).map((p) => [x, ...p])));
  let best: number[] = [];
  let bestCost = Infinity;
  for (const p of perms(truth.map((_, i) => i))) {
    const cost = p.reduce((s, j, i) => s + Math.hypot(est[i]!.re - truth[j]!.re, est[i]!.im - truth[j]!.im), 0);
    if (cost < bestCost) {
      bestCost = cost;
      best = p;
    }
  }
  return best.map((j, i) => [est[i]!, truth[j]!]);
}

function cLog(z: Complex): Complex {
  return { re: Math.log(Math.hypot(z.re, z.im)), im: Math.atan2(z.im, z.re) };
}

/** Both bounds for every matched pole (the boolean form of expectClose). */
function within(est: Complex[], truth: Complex[]): boolean {
  if (est.length !== truth.length) return false;
  return match(est, truth).every(([e, t]) => {
    const le = cLog(e);
    const lt = cLog(t);
    const sErr = Math.hypot(le.re - lt.re, le.im - lt.im) / T;
    return sErr <= 0.1 * (Math.hypot(lt.re, lt.im) / T) && Math.hypot(e.re - t.re, e.im - t.im) <= 0.01;
  });
}

/** |ln zhat - ln z| / T <= 0.1 |s|  and  |zhat - z| <= 0.01. */
function expectClose(est: Complex[], truth: Complex[], label: string) {
  expect(est).toHaveLength(truth.length);
  for (const [e, t] of match(est, truth)) {
    const le = cLog(e);
    const lt = cLog(t);
    const sErr = Math.hypot(le.re - lt.re, le.im - lt.im) / T;
    const sMag = Math.hypot(lt.re, lt.im) / T;
    expect(sErr, `${label}: s-plane error of ${JSON.stringify(t)}`).toBeLessThanOrEqual(0.1 * sMag);
    expect(Math.hypot(e.re - t.re, e.im - t.im), `${label}: z error of ${JSON.stringify(t)}`).toBeLessThanOrEqual(0.01);
  }
}

const pi = discretePid({ kp: KP, ti: TI, T });
const N = 500;

describe("closed-loop identification under a velocity-form PI", () => {
  it("the scenario is a stable loop around an oscillatory plant (sanity of the test set-up)", () => {
    expect(truePlant.every((z) => Math.hypot(z.re, z.im) < 1 && Math.abs(z.im) > 0.1)).toBe(true);
    expect(trueClosed.every((z) => Math.hypot(z.re, z.im) < 1)).toBe(true);
    // discretePid gives the formula's PI (docs/domain.md §3).
    expect(pi.num[0]).toBeCloseTo(G, 14);
    expect(pi.num[1]).toBeCloseTo(-KP, 14);
    expect(pi.den).toEqual([1, -1]);
  });

  it("at a constant set point the regressors are collinear: low excitation, no update, no confident estimate", () => {
    const sp = () => 0;
    const data = simulate({ n: N, seed: 11, noiseStd: 0.05, setPoint: sp, ditherStd: 0 });
    const est = new ArxEstimator({ na: 2, nb: 2, nk: 1, T, forgetting: 0.999 });
    data.u.forEach((u, k) => est.push(u, data.y[k]!));
    const v = est.excitation();
    expect(v.excited).toBe(false);
    expect(v.ratio).toBeLessThan(1e-4);
    expect(est.updates).toBe(0);
    // Without the gate the same data give a wrong plant (one direction is not identifiable).
    const blind = new ArxEstimator({ na: 2, nb: 2, nk: 1, T, forgetting: 0.999, gating: "none" });
    data.u.forEach((u, k) => blind.push(u, data.y[k]!));
    const wrong = polyRoots([1, ...blind.model().a]);
    const worst = Math.max(...match(wrong, truePlant).map(([e, t]) => Math.hypot(e.re - t.re, e.im - t.im)));
    expect(worst).toBeGreaterThan(0.01);
  });

  /**
   * Set-point steps as a pseudo-random binary sequence: +-1 held for HOLD samples, the level drawn
   * from a seeded generator (a PRBS-like test signal, Ljung 1999, sec. 13.3; the hold of 3 samples
   * = 6 s puts its power around the loop's own bandwidth, where the data say most about the poles).
   */
  const HOLD = 3;
  const prbsSteps = (seed: number) => {
    const draw = mulberry32(seed * 31 + 5);
    const levels: number[] = [];
    return (k: number) => {
      const j = Math.floor(k / HOLD);
      while (levels.length <= j) levels.push(draw() < 0.5 ? 1 : -1);
      return levels[j]!;
    };
  };
  const scenarios = [
    // minRunsWithin: share of the 40 runs at 20 dB that must meet both bounds; measured on seeds
    // 101-300 (200 runs) with these settings: steps 96 % (plant) and 100 % (closed loop), dither
    // 82 % and 86 %. The estimator's own spread at 20 dB is what sets these; see the test.
    { name: "set-point steps", setPointFor: prbsSteps, ditherStd: 0, minRunsWithin: 0.9 },
    { name: "a small dither at a constant set point", setPointFor: () => () => 0, ditherStd: 0.3, minRunsWithin: 0.75 },
  ];

  /** Identify from one seeded run; returns estimated plant and closed-loop poles and their errors. */
  function identify(sc: (typeof scenarios)[number], seed: number, snrLinear: number) {
    const setPoint = sc.setPointFor(seed);
    const sd = noiseFor20dB(setPoint, sc.ditherStd, N, seed) * Math.sqrt(100 / snrLinear);
    const data = simulate({ n: N, seed, noiseStd: sd, setPoint, ditherStd: sc.ditherStd });
    const est = new ArxEstimator({ na: 2, nb: 2, nk: 1, T, forgetting: 0.999 });
    data.u.forEach((u, k) => est.push(u, data.y[k]!));
    const model = est.model();
    const plant = polyRoots([1, ...model.a]);
    const closed = polyRoots(closedLoopPolynomial(model, pi));
    const cov = est.parameterCovariance();
    const conf = poleConfidence([1, ...model.a], [
      [cov[0]![0]!, cov[0]![1]!],
      [cov[1]![0]!, cov[1]![1]!],
    ]);
    const zErr = (pairs: [Complex, Complex][]) => Math.max(...pairs.map(([e, t]) => Math.hypot(e.re - t.re, e.im - t.im)));
    return { est, model, plant, closed, conf, plantErr: zErr(match(plant, truePlant)), closedErr: zErr(match(closed, trueClosed)) };
  }

  for (const sc of scenarios) {
    it(`with ${sc.name} at 30 dB SNR, 500 samples give plant and closed-loop poles within 10 % in s and 0.01 in z (10 seeds, every run)`, () => {
      for (let seed = 21; seed < 31; seed++) {
        const r = identify(sc, seed, 1000);
        expect(r.est.excitation().excited).toBe(true);
        expectClose(r.plant, truePlant, `${sc.name}, seed ${seed}, plant`);
        expectClose(r.closed, trueClosed, `${sc.name}, seed ${seed}, closed loop`);
      }
    });

    it(`with ${sc.name} at 20 dB SNR, 500 samples: at least ${sc.minRunsWithin * 100} % of runs within 10 % in s and 0.01 in z, unbiased, every run within 4 sigma of its own confidence`, () => {
      // At 20 dB and 500 samples the delta-method standard deviation of these poles is about
      // 0.003-0.01 (poleConfidence), so with Gaussian noise no estimator meets a 0.01 bound in
      // every run: the per-run statement is a coverage (share of seeded runs). Every run is held
      // to both bounds at 30 dB above.
      const runs = Array.from({ length: 40 }, (_, i) => identify(sc, 101 + i, 100));
      runs.forEach((r) => expect(r.est.excitation().excited).toBe(true));
      const share = (pick: (r: (typeof runs)[number]) => [Complex[], Complex[]]) =>
        runs.filter((r) => {
          const [est, truth] = pick(r);
          return within(est, truth);
        }).length / runs.length;
      expect(share((r) => [r.plant, truePlant]), "share of runs with the plant poles within both bounds").toBeGreaterThanOrEqual(sc.minRunsWithin);
      expect(share((r) => [r.closed, trueClosed]), "share of runs with the closed-loop poles within both bounds").toBeGreaterThanOrEqual(sc.minRunsWithin);
      const median = (v: number[]) => v.slice().sort((a, b) => a - b)[Math.floor(v.length / 2)]!;
      expect(median(runs.map((r) => r.plantErr))).toBeLessThanOrEqual(0.01);
      expect(median(runs.map((r) => r.closedErr))).toBeLessThanOrEqual(0.01);
      // Bias: the mean of the 40 estimated upper-half plant poles (and closed-loop poles) meets both bounds.
      const meanOf = (sets: Complex[][], truth: Complex[]) =>
        truth.map((t) => {
          const picked = sets.map((set) => set.reduce((b, z) => (Math.hypot(z.re - t.re, z.im - t.im) < Math.hypot(b.re - t.re, b.im - t.im) ? z : b)));
          return { re: picked.reduce((s, z) => s + z.re, 0) / picked.length, im: picked.reduce((s, z) => s + z.im, 0) / picked.length };
        });
      expectClose(meanOf(runs.map((r) => r.plant), truePlant), truePlant, `${sc.name}, mean of 40 plant estimates`);
      expectClose(meanOf(runs.map((r) => r.closed), trueClosed), trueClosed, `${sc.name}, mean of 40 closed-loop estimates`);
      // Each run's error is explained by its own delta-method uncertainty (4 sigma of the (Re, Im) spread).
      runs.forEach((r) => {
        for (const [e, t] of match(r.plant, truePlant)) {
          const c = r.conf.find((p) => Math.hypot(p.root.re - e.re, p.root.im - e.im) < 1e-9)!;
          const sigma = Math.sqrt(c.covariance[0][0] + c.covariance[1][1]);
          expect(Math.hypot(e.re - t.re, e.im - t.im)).toBeLessThanOrEqual(4 * sigma);
        }
      });
    });
  }
});
