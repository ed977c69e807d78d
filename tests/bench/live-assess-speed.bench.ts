/**
 * In-process cost of the live routine assessment (`npm run bench:live-assess`): `--loops` loops
 * (default 200) at 1 s, `--samples` samples each (default 10,000: 2 million in all), pushed in
 * batches of 10 one loop after another as the ingest hands them over, with `runDue` after every
 * round (one batch per loop) as the service's timer does. A plain script: it prints CPU times
 * measured in one run (process.cpuUsage around whole rounds, never around a single call) and
 * asserts nothing about time.
 *
 * Printed per incoming sample: the push into the windows, the window runs amortised over the run
 * (including the filling of every window, which costs more than the steady state), and the steady
 * state: the mean CPU of a full-window run spread over the RERUN_FACTOR·window samples between two
 * runs (at 10,000 samples a loop's window is full after its run near 5,860 samples, and runs again
 * once more, so steady runs are about a fifth of all runs). Beside them, in the same run, the loop tracker (server/tracking/loop-tracker.ts: the
 * pipeline's own per-sample estimation) on the same batches of `--tracked` loops, as one part of
 * the pipeline's per-sample cost without the assessment.
 *
 * Loops: a third with a sticking valve (oscillating, so both stiction tests run), a third with an
 * outside sinusoidal load, a third healthy; PI kp 0.5, Ti 15 s (no decimation: the costliest
 * window schedule per incoming sample). No dead time is configured unless `--dead-time S` is given.
 */
import { availableParallelism, loadavg } from "node:os";
import { parseLoopConfig, type AssessSample } from "@/lib/assessment";
import type { SampleDto } from "@/lib/domain/types";
import { FILL_RERUN_FACTOR, FIT_RERUN_FACTOR, LiveAssessor, RERUN_FACTOR, rerunFactor, WINDOW_SAMPLES } from "@/server/assessment/assessor";
import { LoopTracker } from "@/server/tracking/loop-tracker";
import { simulateLoop, type SimOptions } from "@/tests/assessment/loop-sim";
import { piTuning, testLoopConfig } from "@/tests/helpers/loop-config";
import { FakeClock } from "@/tests/tracking/helpers";

function arg(name: string, fallback: number): number {
  const i = process.argv.indexOf(`--${name}`);
  const v = i >= 0 ? Number(process.argv[i + 1]) : fallback;
  if (!Number.isFinite(v) || v <= 0) throw new Error(`--${name} needs a positive number`);
  return v;
}

const LOOPS = arg("loops", 200);
const SAMPLES = arg("samples", 10_000);
const TRACKED = Math.min(LOOPS, arg("tracked", 20));
const BATCH = 10;
const T0_MS = Date.UTC(2026, 11, 2, 6, 0, 0);

const kinds: { name: string; sim: Omit<SimOptions, "seed" | "n"> }[] = [
  { name: "sticking valve", sim: { kp: 0.5, ti: 15, stiction: { S: 4, J: 1 }, sp0: 52 } },
  { name: "outside cycle", sim: { kp: 0.5, ti: 15, sine: { amplitude: 2, periodS: 90 } } },
  { name: "healthy", sim: { kp: 0.5, ti: 15 } },
];
/** Distinct recordings per kind; loops share them (each loop has its own window). */
const SEEDS = 3;

function telemetry(samples: readonly AssessSample[]): SampleDto[][] {
  const tele = samples.map((s): SampleDto => ({ t: T0_MS + s.t * 1000, sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode ?? "auto" }));
  const batches: SampleDto[][] = [];
  for (let i = 0; i < tele.length; i += BATCH) batches.push(tele.slice(i, i + BATCH));
  return batches;
}

function cpuMs(c0: NodeJS.CpuUsage): number {
  const c = process.cpuUsage(c0);
  return (c.user + c.system) / 1e3;
}

const recordings = kinds.flatMap((k, ki) => Array.from({ length: SEEDS }, (_, s) => telemetry(simulateLoop({ ...k.sim, seed: 100 * ki + s + 1, n: SAMPLES }))));
// --dead-time S configures the loops' dead time (the simulated one is 2 s): the figures that need it
// (Harris index, disturbance time, the sensitivity peak of loop-margin.ts) then run too.
const deadIdx = process.argv.indexOf("--dead-time");
const deadTimeS = deadIdx >= 0 ? Number(process.argv[deadIdx + 1]) : null;
const config = parseLoopConfig({
  tag: "FIC-401",
  ...(deadTimeS !== null ? { deadTimeS } : {}),
  kind: "flow",
  units: "m3/h",
  pvLo: 0,
  pvHi: 100,
  samplePeriodS: 1,
  normalMode: "auto",
  controller: { kp: 0.5, ti: 15, td: 0, action: "reverse", mvLo: 0, mvHi: 100 },
});

let fullRuns = 0;
let fillRuns = 0;
let roundResults: number[] = [];
/** Incoming samples each round's full-window runs stand for (the assessor's re-run factor × the window). */
let roundSpan = 0;
let fullSpan = 0;
const assessor = new LiveAssessor({
  now: () => 0,
  onResult: (r) => {
    roundResults.push(r.windowSamples);
    roundSpan += rerunFactor(r.report, config) * WINDOW_SAMPLES;
  },
});
for (let id = 1; id <= LOOPS; id++) assessor.upsertLoop({ loopId: id, tenantId: 1, siteId: 1 + (id % 4), config });
const recordingOf = (id: number) => recordings[(id - 1) % recordings.length]!;

const clock = new FakeClock(T0_MS);
const trackers = Array.from({ length: TRACKED }, (_, i) => new LoopTracker(testLoopConfig({ id: i + 1, tag: `FIC-${500 + i}`, controller: piTuning(0.5, 15) }), { clock }));

console.log(
  `live assessment speed: ${LOOPS} loops × ${SAMPLES} samples at 1 s (${LOOPS * SAMPLES} in all), batches of ${BATCH}, window ${WINDOW_SAMPLES}, re-run after ${RERUN_FACTOR}× the full window (${FILL_RERUN_FACTOR}× the data so far while it fills); ${availableParallelism()} CPUs, load ${loadavg()[0]!.toFixed(2)}`,
);
let pushMs = 0;
let runMs = 0;
let fullRunMs = 0;
let trackerMs = 0;
let pushed = 0;
let tracked = 0;
const rounds = Math.ceil(SAMPLES / BATCH);
const wall0 = performance.now();
for (let r = 0; r < rounds; r++) {
  let c0 = process.cpuUsage();
  for (let id = 1; id <= LOOPS; id++) {
    const batch = recordingOf(id)[r];
    if (!batch) continue;
    assessor.push(id, batch);
    pushed += batch.length;
  }
  pushMs += cpuMs(c0);
  roundResults = [];
  roundSpan = 0;
  c0 = process.cpuUsage();
  assessor.runDue(Infinity);
  const ms = cpuMs(c0);
  runMs += ms;
  // A round whose runs were all on full windows counts toward the steady state.
  if (roundResults.length && roundResults.every((n) => n === WINDOW_SAMPLES)) {
    fullRuns += roundResults.length;
    fullRunMs += ms;
    fullSpan += roundSpan;
  } else fillRuns += roundResults.length;
  clock.t = T0_MS + (r + 1) * BATCH * 1000;
  c0 = process.cpuUsage();
  for (let i = 0; i < TRACKED; i++) {
    const batch = recordingOf(i + 1)[r];
    if (!batch) continue;
    trackers[i]!.push(batch, clock.t);
    tracked += batch.length;
  }
  trackerMs += cpuMs(c0);
}
const wallS = (performance.now() - wall0) / 1e3;

const us = (ms: number, n: number) => (1e3 * ms) / n;
const pushUs = us(pushMs, pushed);
const runUs = us(runMs, pushed);
const fullRunAvgMs = fullRuns ? fullRunMs / fullRuns : null;
// each full-window run's CPU spread over the incoming samples until its next run (its re-run factor × the window)
const steadyRunUs = fullRuns ? us(fullRunMs, fullSpan) : null;
const trackerUs = us(trackerMs, tracked);
const f = (x: number | null, d = 3) => (x === null ? "n/a" : x.toFixed(d));
console.log(`  push into the windows          ${f(pushUs)} µs/sample (${pushed} samples, ${f(pushMs / 1e3, 2)} s CPU)`);
console.log(`  window runs, whole run         ${f(runUs)} µs/sample (${fullRuns + fillRuns} runs, ${fillRuns} of them while windows filled)`);
console.log(`  full-window run                ${f(fullRunAvgMs, 2)} ms CPU on average (${fullRuns} runs of ${WINDOW_SAMPLES} samples)`);
console.log(`  window runs, steady state      ${f(steadyRunUs)} µs/sample (one full-window run per ${f(fullRuns ? fullSpan / fullRuns : null, 0)} samples on average: ${RERUN_FACTOR} or ${FIT_RERUN_FACTOR} windows)`);
console.log(`  live assessment, whole run     ${f(pushUs + runUs)} µs/sample`);
console.log(`  live assessment, steady state  ${f(steadyRunUs === null ? null : pushUs + steadyRunUs)} µs/sample (target <= 2)`);
console.log(`  loop tracker alone (${TRACKED} loops, same batches) ${f(trackerUs)} µs/sample; ratio assessment (steady) / tracker ${f(steadyRunUs === null ? null : (pushUs + steadyRunUs) / trackerUs)}`);
console.log(`  wall ${wallS.toFixed(1)} s`);
