/**
 * Benchmark of the numerical core's per-sample cost (`npm run bench`). A plain script: it prints
 * rates and ratios measured in one run and asserts nothing about time.
 *
 * Every rate is also given as a ratio to BASELINE: a bare typed-array RLS update (n = 4,
 * exponential forgetting) written here and never to be changed, so ratios stay comparable between
 * machines and runs. Target (docs/architecture.md §11 costs): the full tracker step per estimation
 * update <= 4x the bare RLS update.
 *
 * "Full tracker step" = what server/tracking/loop-tracker.ts computes per estimation update from
 * the model: RLS update, closed-loop characteristic polynomial, all its roots, Jury verdict, the
 * radius of every root (each pole the state carries has one), and zeta / wn / tau of the dominant
 * pole (the decay ratio is the assessment's, lib/domain/assessment.ts, once per state), written by
 * `poleCharacteristicsInto` into one reused object as `assessPoles` does; the roots are solved with
 * warm start (the previous step's roots seed the solver, as a re-solve of a slowly moving
 * polynomial can). The same step with a cold solve, as the tracker solves a state's poles, is the
 * row after it (no target). The earlier variant (cold solve, allocating `poleCharacteristics` for
 * every root) is kept beside them for comparison. The tracker itself solves its closed-loop poles once per
 * state period, cold (a resumed tracker computes the same roots), through
 * server/tracking/pole-roots.ts: the "tracker state poles" rows give that path beside the contract
 * API it replaced.
 *
 * After the timings, a coverage table (tests/bench/coverage-table.ts): seeded Monte Carlo interval
 * coverage of pole radii, through the tracker, of the IV estimator in manual and of the rim
 * forecast, each beside its target band (about a minute or two on one core; BENCH_COVERAGE=0
 * leaves it out).
 */
import { availableParallelism, loadavg } from "node:os";
import { RecursiveLeastSquares } from "@/lib/control/rls";
import { ArxEstimator } from "@/lib/control/arx";
import { closedLoopArxInto, closedLoopPolynomial, discretePid } from "@/lib/control/closed-loop";
import { polyRoots, polyRootsInto } from "@/lib/control/roots";
import { juryStable, juryTest } from "@/lib/control/jury";
import { poleCharacteristics, poleCharacteristicsInto } from "@/lib/control/zplane";
import { closedLoopRoots } from "@/server/tracking/pole-roots";
import type { ArxModel } from "@/lib/control/types";
import { printCoverageTable } from "./coverage-table";
import { printOracleTable } from "./forecast-oracle-table";
import { printDriftCost } from "./tracker-drift-cost";
import { mulberry32 } from "@/tests/helpers/seeded-random";

// ---- data: seeded regressors and outputs (mulberry32), shared by every case -------------------
const rand = mulberry32(12345);
const ROWS = 4096; // power of two: index with & (ROWS - 1)
const PHI8 = new Float64Array(ROWS * 8).map(() => rand() - 0.5);
const Y = new Float64Array(ROWS).map(() => rand() - 0.5);

// ---- BASELINE (do not change): bare RLS update, n = 4, lambda = 0.99, symmetric P update -------
function baselineLoop(iterations: number): number {
  const n = 4;
  const lambda = 0.99;
  const theta = new Float64Array(n);
  const P = new Float64Array(n * n);
  for (let i = 0; i < n; i++) P[i * n + i] = 1000;
  const pphi = new Float64Array(n);
  const phi = new Float64Array(n);
  let sink = 0;
  for (let it = 0; it < iterations; it++) {
    const row = (it & (ROWS - 1)) * 8;
    for (let i = 0; i < n; i++) phi[i] = PHI8[row + i]!;
    const y = Y[it & (ROWS - 1)]!;
    let r = 0;
    let yhat = 0;
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += P[i * n + j]! * phi[j]!;
      pphi[i] = s;
      r += phi[i]! * s;
      yhat += phi[i]! * theta[i]!;
    }
    const e = y - yhat;
    const d = lambda + r;
    for (let i = 0; i < n; i++) theta[i] = theta[i]! + (pphi[i]! / d) * e;
    for (let i = 0; i < n; i++) {
      const ki = pphi[i]! / d;
      for (let j = i; j < n; j++) {
        const v = (P[i * n + j]! - ki * pphi[j]!) / lambda;
        P[i * n + j] = v;
        P[j * n + i] = v;
      }
    }
    sink += e;
  }
  return sink;
}
// ---- end of BASELINE -------------------------------------------------------------------------

function timeOnce(fn: (iterations: number) => number, iterations: number): number {
  const t0 = process.hrtime.bigint();
  const sink = fn(iterations);
  const t1 = process.hrtime.bigint();
  if (Number.isNaN(sink)) console.log(`(sink NaN in ${fn.name})`);
  return Number(t1 - t0) / iterations;
}

const ROUNDS = 101;

/**
 * ns per iteration of fn and of BASELINE, each the best of ROUNDS short runs taken alternately
 * (the machine is shared: interleaving keeps the ratio meaningful when the load changes; short
 * runs, about 5 ms each, are more likely to fall in an undisturbed time slice), and the median of
 * the per-round ratios (each fn run against the baseline run just before it).
 * ROUNDS was 15 (about 0.15 s per case); on this 2-core VM the speed of the same code changes by
 * up to 2x for seconds at a time (seen on the baseline alone: 79 to 173 ns in consecutive runs),
 * so 101 rounds (about 1 s per case) give both sides a fair chance at an undisturbed slice.
 */
function measure(fn: (iterations: number) => number, iterations: number): { ns: number; base: number; medianRatio: number } {
  timeOnce(fn, Math.min(iterations, 20_000));
  let best = Infinity;
  let base = Infinity;
  const ratios: number[] = [];
  for (let r = 0; r < ROUNDS; r++) {
    const b = timeOnce(baselineLoop, 50_000);
    const f = timeOnce(fn, iterations);
    base = Math.min(base, b);
    best = Math.min(best, f);
    ratios.push(f / b);
  }
  ratios.sort((x, y) => x - y);
  return { ns: best, base, medianRatio: ratios[(ROUNDS - 1) / 2]! };
}

function rlsLoop(n: number) {
  return (iterations: number): number => {
    const rls = new RecursiveLeastSquares({ parameters: n, forgetting: 0.99 });
    const phi = new Float64Array(n);
    let sink = 0;
    for (let it = 0; it < iterations; it++) {
      const row = (it & (ROWS - 1)) * 8;
      for (let i = 0; i < n; i++) phi[i] = PHI8[row + i]!;
      sink += rls.update(phi, Y[it & (ROWS - 1)]!);
    }
    return sink;
  };
}

// Loop: second-order plant under a PI at T = 1 s (invented example).
const T = 1;
const pi = discretePid({ kp: 0.8, ti: 20, T });
const plantTrue: ArxModel = { a: [-1.6, 0.65], b: [0.05, 0.03], nk: 1, T };

/**
 * Tracker step, hot path: RLS update + closedLoopArxInto + polyRootsInto (warm start, or cold as
 * server/tracking/pole-roots.ts solves a state's poles) + juryStable + radius per root +
 * poleCharacteristicsInto of the dominant root into one reused object (as lib/domain/assessment.ts
 * `assessPoles` does for a state).
 */
function trackerHotLoop(iterations: number): number {
  return trackerStep(iterations, true);
}
function trackerHotColdLoop(iterations: number): number {
  return trackerStep(iterations, false);
}
function trackerStep(iterations: number, warm: boolean): number {
  const rls = new RecursiveLeastSquares({ parameters: 4, forgetting: 0.99, initialTheta: [...plantTrue.a, ...plantTrue.b] });
  const phi = new Float64Array(4);
  const coeffs = new Float64Array(8);
  const re = new Float64Array(8);
  const im = new Float64Array(8);
  const radius = new Float64Array(8);
  const z = { re: 0, im: 0 };
  const dom = poleCharacteristics(z, T);
  let sink = 0;
  for (let it = 0; it < iterations; it++) {
    const row = (it & (ROWS - 1)) * 8;
    for (let i = 0; i < 4; i++) phi[i] = 0.01 * PHI8[row + i]!;
    const y = phi[0]! * 1.6 - phi[1]! * 0.65 + 0.05 * phi[2]! + 0.03 * phi[3]! + 1e-4 * Y[it & (ROWS - 1)]!;
    sink += rls.update(phi, y);
    const len = closedLoopArxInto(rls.theta, 2, 2, 1, pi.num, pi.den, coeffs);
    const count = polyRootsInto(coeffs, re, im, len, warm); // warm start: a re-solve of a slowly moving polynomial
    sink += juryStable(coeffs, len) ? 1 : 0;
    for (let k = 0; k < count; k++) radius[k] = Math.sqrt(re[k]! * re[k]! + im[k]! * im[k]!);
    // the dominant root comes first (descending modulus)
    z.re = re[0]!;
    z.im = im[0]!;
    poleCharacteristicsInto(z, T, dom);
    sink += dom.zeta + dom.wn + radius[0]!;
  }
  return sink;
}

/** The earlier hot step: full poleCharacteristics (allocating, every figure) for each of the three roots. */
function trackerHotAllRootsLoop(iterations: number): number {
  const rls = new RecursiveLeastSquares({ parameters: 4, forgetting: 0.99, initialTheta: [...plantTrue.a, ...plantTrue.b] });
  const phi = new Float64Array(4);
  const coeffs = new Float64Array(8);
  const re = new Float64Array(8);
  const im = new Float64Array(8);
  const z = { re: 0, im: 0 };
  let sink = 0;
  for (let it = 0; it < iterations; it++) {
    const row = (it & (ROWS - 1)) * 8;
    for (let i = 0; i < 4; i++) phi[i] = 0.01 * PHI8[row + i]!;
    const y = phi[0]! * 1.6 - phi[1]! * 0.65 + 0.05 * phi[2]! + 0.03 * phi[3]! + 1e-4 * Y[it & (ROWS - 1)]!;
    sink += rls.update(phi, y);
    const len = closedLoopArxInto(rls.theta, 2, 2, 1, pi.num, pi.den, coeffs);
    const count = polyRootsInto(coeffs, re, im, len);
    sink += juryStable(coeffs, len) ? 1 : 0;
    for (let k = 0; k < count; k++) {
      z.re = re[k]!;
      z.im = im[k]!;
      sink += poleCharacteristics(z, T).radius;
    }
  }
  return sink;
}

/** Tracker step through the contract API: ArxEstimator.push + closedLoopPolynomial + polyRoots + juryTest + poleCharacteristics. */
function trackerApiLoop(iterations: number): number {
  const est = new ArxEstimator({ na: 2, nb: 2, nk: 1, T, forgetting: 0.99, gating: "none" });
  let sink = 0;
  let y1 = 0, y2 = 0, u1 = 0, u2 = 0;
  for (let it = 0; it < iterations; it++) {
    const u = PHI8[(it & (ROWS - 1)) * 8]!;
    const y = 1.6 * y1 - 0.65 * y2 + 0.05 * u1 + 0.03 * u2 + 1e-3 * Y[it & (ROWS - 1)]!;
    est.push(u, y);
    y2 = y1; y1 = y; u2 = u1; u1 = u;
    const model = est.model();
    const cl = closedLoopPolynomial(model, pi);
    const roots = polyRoots(cl);
    sink += juryTest(cl).stable ? 1 : 0;
    for (const z of roots) sink += poleCharacteristics(z, T).radius;
  }
  return sink;
}

/** The closed-loop poles of a tracker state: before, the contract API (closedLoopPolynomial + polyRoots); now, server/tracking/pole-roots.ts (closedLoopArxInto + polyRootsInto, cold). */
function statePolesLoop(path: "api" | "tracker", model: ArxModel) {
  return (iterations: number): number => {
    const m = { ...model, a: [...model.a] };
    const a0 = model.a[0]!;
    let sink = 0;
    for (let it = 0; it < iterations; it++) {
      m.a[0] = a0 + 1e-6 * Y[it & (ROWS - 1)]!;
      sink += path === "api" ? polyRoots(closedLoopPolynomial(m, pi))[0]!.re : closedLoopRoots(m, pi).roots[0]!.re;
    }
    return sink;
  };
}
const plantSlow: ArxModel = { a: [-1.6, 0.65, 0.01], b: [0.05, 0.03, 0.01], nk: 4, T };

/** Parts of the hot step alone, to see which dominates. */
function partLoop(part: "closed-loop" | "roots" | "roots-warm" | "jury" | "characteristics" | "characteristics-into") {
  return (iterations: number): number => {
    const theta = Float64Array.from([...plantTrue.a, ...plantTrue.b]);
    const coeffs = new Float64Array(8);
    const re = new Float64Array(8);
    const im = new Float64Array(8);
    const len = closedLoopArxInto(theta, 2, 2, 1, pi.num, pi.den, coeffs);
    const count = polyRootsInto(coeffs, re, im, len);
    const z = { re: re[0]!, im: im[0]! };
    const c1 = coeffs[1]!;
    const into = poleCharacteristics(z, T);
    let sink = 0;
    for (let it = 0; it < iterations; it++) {
      theta[0] = -1.6 + 1e-6 * Y[it & (ROWS - 1)]!;
      if (part === "closed-loop") sink += closedLoopArxInto(theta, 2, 2, 1, pi.num, pi.den, coeffs) + coeffs[1]!;
      else if (part === "roots") {
        coeffs[1] = c1 + 1e-6 * Y[it & (ROWS - 1)]!;
        sink += polyRootsInto(coeffs, re, im, len) + re[0]!;
      } else if (part === "roots-warm") {
        coeffs[1] = c1 + 1e-6 * Y[it & (ROWS - 1)]!;
        sink += polyRootsInto(coeffs, re, im, len, true) + re[0]!;
      } else if (part === "jury") {
        coeffs[1] = c1 + 1e-6 * Y[it & (ROWS - 1)]!;
        sink += juryStable(coeffs, len) ? 1 : 0;
      } else {
        z.re = re[it % count]! + 1e-9 * Y[it & (ROWS - 1)]!;
        z.im = im[it % count]!;
        sink += part === "characteristics" ? poleCharacteristics(z, T).radius : poleCharacteristicsInto(z, T, into).radius;
      }
    }
    return sink;
  };
}

/** ArxEstimator.push alone (RLS + regressor bookkeeping + excitation accumulation, Jacobi every 25). */
function arxPushLoop(iterations: number): number {
  const est = new ArxEstimator({ na: 2, nb: 2, nk: 1, T, forgetting: 0.99, gating: "none" });
  let y1 = 0, y2 = 0, u1 = 0, u2 = 0;
  for (let it = 0; it < iterations; it++) {
    const u = PHI8[(it & (ROWS - 1)) * 8]!;
    const y = 1.6 * y1 - 0.65 * y2 + 0.05 * u1 + 0.03 * u2 + 1e-3 * Y[it & (ROWS - 1)]!;
    est.push(u, y);
    y2 = y1; y1 = y; u2 = u1; u1 = u;
  }
  return est.rls.theta[0]!;
}

timeOnce(baselineLoop, 200_000);
const cases: [string, (iterations: number) => number, number][] = [
  ["BASELINE bare RLS update (n = 4)", baselineLoop, 50_000],
  ["RecursiveLeastSquares ARX(2,2) (n = 4, directional)", rlsLoop(4), 50_000],
  ["RecursiveLeastSquares ARX(4,4) (n = 8, directional)", rlsLoop(8), 20_000],
  ["ArxEstimator.push ARX(2,2,1) (RLS + history + excitation accumulation)", arxPushLoop, 20_000],
  ["tracker step, hot path (RLS + closedLoopArxInto + polyRootsInto warm + juryStable + |z| x3 + poleCharacteristicsInto x1)", trackerHotLoop, 10_000],
  ["tracker step, hot path with a cold solve (as a tracker state's poles, server/tracking/pole-roots.ts)", trackerHotColdLoop, 10_000],
  ["tracker step, earlier hot path (cold polyRootsInto, poleCharacteristics x3)", trackerHotAllRootsLoop, 10_000],
  ["  part: closedLoopArxInto", partLoop("closed-loop"), 50_000],
  ["  part: polyRootsInto (cubic)", partLoop("roots"), 20_000],
  ["  part: polyRootsInto (cubic, warm start from the previous roots)", partLoop("roots-warm"), 20_000],
  ["  part: juryStable (cubic)", partLoop("jury"), 50_000],
  ["  part: poleCharacteristics (one root)", partLoop("characteristics"), 50_000],
  ["  part: poleCharacteristicsInto (one root, one reused object)", partLoop("characteristics-into"), 50_000],
  ["tracker state poles, ARX(2,2,1) + PI (cubic): closedLoopPolynomial + polyRoots (before)", statePolesLoop("api", plantTrue), 20_000],
  ["tracker state poles, ARX(2,2,1) + PI (cubic): closedLoopRoots (closedLoopArxInto + polyRootsInto)", statePolesLoop("tracker", plantTrue), 20_000],
  ["tracker state poles, ARX(3,3,4) + PI (degree 7): closedLoopPolynomial + polyRoots (before)", statePolesLoop("api", plantSlow), 5_000],
  ["tracker state poles, ARX(3,3,4) + PI (degree 7): closedLoopRoots (closedLoopArxInto + polyRootsInto)", statePolesLoop("tracker", plantSlow), 5_000],
  ["tracker step, contract API (ArxEstimator.push + closedLoopPolynomial + polyRoots + juryTest + poleCharacteristics x3)", trackerApiLoop, 2_000],
];
console.log(`load average at start: ${loadavg().map((v) => v.toFixed(2)).join(" ")} (${availableParallelism()} CPUs)`);
console.log(`control bench (Node ${process.version}), one run; ns per call (best of ${ROUNDS}), ratio of bests to BASELINE (best of ${ROUNDS}, measured alternately) and median of the ${ROUNDS} paired ratios`);
let hotRatio = NaN;
let hotMedian = NaN;
for (const [name, fn, iterations] of cases) {
  const { ns, base, medianRatio } = measure(fn, iterations);
  const ratio = ns / base;
  // the target is read on the step the tracker really runs: its state's poles are a cold solve
  if (fn === trackerHotColdLoop) {
    hotRatio = ratio;
    hotMedian = medianRatio;
  }
  console.log(`${name.padEnd(112)} ${ns.toFixed(1).padStart(8)} ns  ${(1e3 / ns).toFixed(2).padStart(7)} M/s  x${ratio.toFixed(2)}  median x${medianRatio.toFixed(2)}  (baseline ${base.toFixed(1)} ns)`);
}
console.log(`load average at end: ${loadavg().map((v) => v.toFixed(2)).join(" ")}`);
console.log(`target: hot tracker step (cold solve, as the tracker) <= 4x BASELINE -> measured x${hotRatio.toFixed(2)} (ratio of bests; ${hotRatio <= 4 ? "within" : "over"} target), median of paired rounds x${hotMedian.toFixed(2)}`);
printDriftCost();
if (process.env.BENCH_COVERAGE !== "0") {
  printCoverageTable();
  printOracleTable();
}
