/**
 * Monte Carlo harness for the rim forecast THROUGH THE TRACKER: a simulated loop
 * (simulators/loop-sim.ts, its own PI in velocity form, noise, load steps and set-point moves)
 * feeds a LoopTracker (server/tracking/loop-tracker.ts); at half way through a 10 h drift the
 * tracker's `forecast.radiusOne` is compared with the true time at which the closed loop reaches
 * the unit circle, found by bisection on the spectral radius of the simulator's own closed-loop
 * state matrix (`closedLoopStateMatrix` at the drift state of each time). Shared by the coverage
 * table of `npm run bench`. Units: seconds of simulated time, PV and MV in % of span.
 */
import { eigenvalues } from "@/simulators/eigen";
import { LoopSim, type LoopSimConfig } from "@/simulators/loop-sim";
import type { DriftSpec } from "@/simulators/scenario";
import type { DriftNoiseOption } from "@/server/tracking/drift-source";
import { LoopTracker } from "@/server/tracking/loop-tracker";
import { forecastRadiusOne, radiusPoint } from "@/server/tracking/figures";
import { FakeClock, arxStructureFor } from "../tracking/helpers";
import { testLoopConfig } from "@/tests/helpers/loop-config";
import { loopConfig } from "../simulators/helpers";

/** Sample period of telemetry, controller and estimation, seconds. */
const T = 5;
/** The tracker's estimator memory at lambda 0.995, seconds. */
const MEMORY_S = T / (1 - 0.995);
/** Drift length of the table's scenarios: the radius reaches 1 at this simulated time, seconds (10 h). */
export const DRIFT_S = 36000;

/**
 * Invented bench loop: first-order plant, gain 1, 20 s lag, 10 s dead time, PI kp 1.6, ti 20 s;
 * true spectral radius about 0.90 at the start, on the branch where it rises with the process gain.
 */
function baseConfig(seed: number, drift: DriftSpec[]): LoopSimConfig {
  return loopConfig({
    tenantSlug: "sim-lab",
    siteSlug: "bench-1",
    tag: "TIC-410",
    telemetryPeriodS: T,
    controllerPeriodS: T,
    plant: { type: "first-order", gain: 1, timeConstantS: 20, deadTimeS: 10 },
    controller: { kp: 1.6, ti: 20, td: 0, tf: 0, action: "reverse", form: "ideal" },
    pvRange: [0, 100],
    mvPct: 50,
    activity: { noiseSdPct: 0.2, loadStepEveryS: 600, loadStepSdPct: 2, loadWalkSdPct: 0.01, setpointEveryS: 300, setpointSdPct: 4, manualEveryS: 0, manualDurationS: 300 },
    drift,
    seed,
  });
}

export function radiusAt(sim: LoopSim, g: number): number {
  return Math.max(...eigenvalues(sim.closedLoopStateMatrix(g, 0)).map((z) => Math.hypot(z.re, z.im)));
}

/**
 * Gain multiplier at which the closed-loop spectral radius equals r: bisection between the gain of
 * least radius (a coarse scan; below it the slow integral pole dominates) and the critical gain.
 */
function gainForRadius(sim: LoopSim, r: number): number {
  const gc = sim.criticalGainFactor();
  let lo = 0.05;
  for (let g = 0.05; g < gc; g += 0.01) if (radiusAt(sim, g) < radiusAt(sim, lo)) lo = g;
  let hi = gc;
  for (let i = 0; i < 60; i++) {
    const mid = 0.5 * (lo + hi);
    if (radiusAt(sim, mid) < r) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

/** Gain schedule of LinearRadiusSim (the same loop every run; only the seed differs). */
let gainTable: number[] | null = null;

/** The loop with a process gain scheduled so that its true spectral radius runs 0.90 -> 1.0 linearly over `driftS`. */
class LinearRadiusSim extends LoopSim {
  private readonly table: number[];
  constructor(config: LoopSimConfig, private readonly driftS: number) {
    super(config);
    if (!gainTable) {
      const probe = new LoopSim(config);
      gainTable = [];
      for (let i = 0; i <= 100; i++) gainTable.push(gainForRadius(probe, 0.9 + (0.1 * i) / 100));
    }
    this.table = gainTable;
  }
  override gainFactor(t = this.simTimeS): number {
    const x = Math.min(100, Math.max(0, (100 * t) / this.driftS));
    const i = Math.min(99, Math.floor(x));
    return this.table[i]! + (x - i) * (this.table[i + 1]! - this.table[i]!);
  }
}

export type ForecastScenario = "linear-radius" | "gain-creep" | "no-drift";

/** A run of `kind` whose drift reaches the rim at `driftS` (default DRIFT_S, 10 h). */
export function makeSim(kind: ForecastScenario, seed: number, driftS = DRIFT_S): LoopSim {
  if (kind === "linear-radius") return new LinearRadiusSim(baseConfig(seed, []), driftS);
  if (kind === "gain-creep") return new LoopSim(baseConfig(seed, [{ kind: "gain-creep", startS: 0, durationS: driftS, toHeadroom: 1 }]));
  return new LoopSim(baseConfig(seed, []));
}

/**
 * First simulated time at which the true spectral radius reaches 1 (bisection on [0, 2 driftS]);
 * null if never. A gain creep to the full headroom ends ON the rim, hence the 1e-9 tolerance.
 */
export function trueCrossing(sim: LoopSim, driftS = DRIFT_S): number | null {
  const r = (t: number) => radiusAt(sim, sim.gainFactor(t)) + 1e-9;
  let lo = 0;
  let hi = 2 * driftS;
  if (r(hi) < 1) return null;
  for (let i = 0; i < 50; i++) {
    const mid = 0.5 * (lo + hi);
    if (r(mid) < 1) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

export interface ForecastMc {
  runs: number;
  /** Runs with a radius-one forecast at half way. */
  forecasts: number;
  /** Share of forecasts whose [low, high] holds the true crossing. */
  coverage: number;
  /** Share of ALL runs whose forecast lies within +-15 % of the true remaining time. */
  within15: number;
  /**
   * The same share with every error moved by the median error: what the best shift common to all
   * runs (a delay, a change of coordinate that moves every run alike) could reach. Below the
   * target, the misses are the spread of the runs (variance), not a bias of the fit.
   */
  within15Centred: number;
  /** Share of runs with no forecast at half way. */
  quiet: number;
  /** Median and standard deviation of the relative error of the forecast remaining time (forecasts only). */
  medianError: number;
  errorSd: number;
  /** True radius at the start and at half way (first run). */
  radiusStart: number;
  radiusHalf: number;
  /**
   * The same runs' figures from the trend of the tracker's radius history alone (the forecast
   * before the parameter drift, docs/domain.md §7; forecastRadiusOne on the tracker's own history).
   */
  history: Omit<ForecastMc, "history" | "radiusStart" | "radiusHalf">;
}

type Forecast = { at: number; low: number; high: number } | null;

/** The figures of one forecast source over the runs (`truth` null: no drift). */
function summarise(list: { forecast: Forecast; truth: number | null }[], half: number): Omit<ForecastMc, "history" | "radiusStart" | "radiusHalf"> {
  let forecasts = 0, covered = 0, within = 0;
  const errors: number[] = [];
  for (const { forecast, truth } of list) {
    if (!forecast) continue;
    forecasts++;
    if (truth === null) continue;
    if (forecast.low <= truth && truth <= forecast.high) covered++;
    const err = (forecast.at - truth) / (truth - half);
    errors.push(err);
    if (Math.abs(err) <= 0.15) within++;
  }
  const runs = list.length;
  errors.sort((a, b) => a - b);
  const median = errors.length ? errors[Math.floor(errors.length / 2)]! : NaN;
  const mean = errors.reduce((a, e) => a + e, 0) / errors.length;
  return {
    runs,
    forecasts,
    coverage: forecasts ? covered / forecasts : NaN,
    within15: within / runs,
    within15Centred: errors.filter((e) => Math.abs(e - median) <= 0.15).length / runs,
    quiet: (runs - forecasts) / runs,
    medianError: median,
    errorSd: errors.length > 1 ? Math.sqrt(errors.reduce((a, e) => a + (e - mean) ** 2, 0) / (errors.length - 1)) : NaN,
  };
}

/** `runs` seeded runs of one scenario whose drift lasts `driftS` (default 10 h), read at half way. */
export function forecastThroughTracker(kind: ForecastScenario, runs: number, seed: number, driftS = DRIFT_S, driftNoise?: DriftNoiseOption): ForecastMc {
  const half = driftS / 2;
  const now: { forecast: Forecast; truth: number | null }[] = [];
  const old: { forecast: Forecast; truth: number | null }[] = [];
  let radiusStart = NaN, radiusHalf = NaN;
  for (let r = 0; r < runs; r++) {
    const sim = makeSim(kind, seed + r, driftS);
    const truth = kind === "no-drift" ? null : trueCrossing(sim, driftS);
    if (r === 0) {
      radiusStart = radiusAt(sim, sim.gainFactor(0));
      radiusHalf = radiusAt(sim, sim.gainFactor(half));
    }
    const clock = new FakeClock();
    const t0 = clock.t;
    const cfg = sim.config;
    const tracker = new LoopTracker(
      testLoopConfig({ tag: cfg.tag, telemetryPeriodS: T, controllerPeriodS: T, estimationPeriodS: T, controller: cfg.controller, ...arxStructureFor(cfg.plant, T) }),
      { clock, ...(driftNoise ? { driftNoise } : {}) },
    );
    let forecast: Forecast = null;
    let tracking = false;
    while (sim.simTimeS <= half) {
      const s = sim.step();
      if (!s) continue;
      clock.t = t0 + s.simTimeS * 1000;
      const st = tracker.push([{ t: clock.t, sp: s.sp, pv: s.pv, mode: s.mode, mv: s.mv }], clock.t);
      if (st) {
        forecast = st.forecast?.radiusOne ?? null;
        tracking = st.spectralRadius !== null && (st.trackerState === "tracking" || st.trackerState === "low-excitation");
      }
    }
    // seconds of simulated time
    const inSim = (f: Forecast): Forecast => (f ? { at: (f.at - t0) / 1000, low: (f.low - t0) / 1000, high: (f.high - t0) / 1000 } : null);
    now.push({ forecast: inSim(forecast), truth });
    const history = tracker.checkpoint().radiusHistory.map((p) => radiusPoint(p.t, p.value, p.sd ?? null));
    old.push({ forecast: tracking ? inSim(forecastRadiusOne(history, MEMORY_S)) : null, truth });
  }
  return { ...summarise(now, half), radiusStart, radiusHalf, history: summarise(old, half) };
}
