/**
 * Cost of the rim forecast's parameter drift (server/tracking/drift-source.ts) in the whole
 * tracker, measured in one run (`npm run bench:control`; prints, asserts nothing about time): the
 * same 5 h of simulated telemetry (the rim-forecast harness's gain creep, 5 s samples) pushed
 * through a LoopTracker with the drift (the default) and one without (`parameterDrift: false`,
 * the forecast from the radius history alone), alternately, best of ROUNDS each and the median of
 * the paired ratios. Target (issue #10, item 3): at most about 1.3x.
 */
import type { DriftNoiseOption } from "@/server/tracking/drift-source";
import { LoopTracker } from "@/server/tracking/loop-tracker";
import type { SampleDto } from "@/lib/domain/types";
import { FakeClock, arxStructureFor } from "../tracking/helpers";
import { testLoopConfig } from "@/tests/helpers/loop-config";
import { makeSim, DRIFT_S } from "../control/forecast-tracker-mc";

const ROUNDS = 9;

function samples(): SampleDto[] {
  const sim = makeSim("gain-creep", 4242);
  const out: SampleDto[] = [];
  const t0 = new FakeClock().t;
  while (sim.simTimeS <= DRIFT_S / 2) {
    const s = sim.step();
    if (s) out.push({ t: t0 + s.simTimeS * 1000, sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode });
  }
  return out;
}

/** Nanoseconds per sample of one tracker run over `data`; returns whether it ended with a forecast. */
function run(data: SampleDto[], drift: boolean, driftNoise?: DriftNoiseOption): { ns: number; forecast: boolean } {
  const sim = makeSim("gain-creep", 4242);
  const cfg = sim.config;
  const clock = new FakeClock();
  const tracker = new LoopTracker(
    testLoopConfig({ tag: cfg.tag, telemetryPeriodS: 5, controllerPeriodS: 5, estimationPeriodS: 5, controller: cfg.controller, ...arxStructureFor(cfg.plant, 5) }),
    { clock, parameterDrift: drift, ...(driftNoise ? { driftNoise } : {}) },
  );
  const start = process.hrtime.bigint();
  for (const s of data) {
    clock.t = s.t;
    tracker.push([s], s.t);
  }
  const ns = Number(process.hrtime.bigint() - start) / data.length;
  return { ns, forecast: tracker.current.forecast?.radiusOne != null };
}

/** `driftNoise`: the drift fit's estimated noise model in the runs with the drift (default the tracker's, DEFAULT_DRIFT_NOISE). */
export function printDriftCost(driftNoise?: DriftNoiseOption): void {
  const data = samples();
  run(data, true, driftNoise);
  run(data, false);
  let bestOn = Infinity;
  let bestOff = Infinity;
  const ratios: number[] = [];
  let forecasts = 0;
  for (let r = 0; r < ROUNDS; r++) {
    const off = run(data, false);
    const on = run(data, true, driftNoise);
    bestOn = Math.min(bestOn, on.ns);
    bestOff = Math.min(bestOff, off.ns);
    ratios.push(on.ns / off.ns);
    if (on.forecast) forecasts++;
  }
  ratios.sort((a, b) => a - b);
  const us = (ns: number) => `${(ns / 1000).toFixed(1)} us`;
  console.log("");
  console.log(`tracker per telemetry sample (${data.length} samples, 5 h gain creep), rim forecast from the parameter drift vs the radius history alone:`);
  console.log(`  with drift ${us(bestOn)}, without ${us(bestOff)}; ratio of bests ${(bestOn / bestOff).toFixed(2)}x, median of ${ROUNDS} paired ratios ${ratios[(ROUNDS - 1) >> 1]!.toFixed(2)}x (target <= 1.3x); runs ending with a forecast ${forecasts}/${ROUNDS}`);
}
