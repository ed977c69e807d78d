/**
 * Speed of the offline assessment (`npm run bench:assess-speed`): one day of a loop at 1 s (86,400
 * samples) as CSV text -> parseAssessCsv -> assessLoop. A plain script: it prints times measured
 * in one run (median of several; wall time and the process's CPU time, which a loaded machine
 * inflates less) and asserts nothing about time. Target: the whole day assesses
 * in well under one second (issue: under 1 s).
 *
 * Four days are measured: a healthy loop, one with a sticking valve (oscillating, so the stiction
 * tests run), one with set-point moves (so the plant is fitted and the loop's own poles formed),
 * and the stiction day with a known dead time (Harris index).
 */
import { availableParallelism, loadavg } from "node:os";
import { assessLoop, parseAssessCsv, parseLoopConfig } from "@/lib/assessment";
import { simulateLoop, type SimOptions } from "@/tests/assessment/loop-sim";

const DAY = 86_400;
const RUNS = 7;

const config = (deadTimeS: number | null) =>
  parseLoopConfig({
    tag: "FIC-101",
    kind: "flow",
    units: "m3/h",
    pvLo: 0,
    pvHi: 100,
    samplePeriodS: 1,
    deadTimeS,
    normalMode: "auto",
    controller: { kp: 0.5, ti: 15, td: 0, action: "reverse", mvLo: 0, mvHi: 100 },
  });

const days: { name: string; sim: SimOptions; deadTimeS: number | null }[] = [
  { name: "healthy", sim: { seed: 1, n: DAY, kp: 0.5, ti: 15 }, deadTimeS: null },
  { name: "sticking valve", sim: { seed: 2, n: DAY, kp: 0.5, ti: 15, stiction: { S: 4, J: 1 }, sp0: 52 }, deadTimeS: null },
  {
    name: "set-point moves",
    sim: { seed: 3, n: DAY, kp: 0.5, ti: 15, spSteps: Array.from({ length: 24 }, (_, i) => ({ at: i * 3600 + 600, sp: i % 2 ? 50 : 55 })) },
    deadTimeS: null,
  },
  { name: "sticking valve + dead time", sim: { seed: 2, n: DAY, kp: 0.5, ti: 15, stiction: { S: 4, J: 1 }, sp0: 52 }, deadTimeS: 2 },
];

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)]!;
}

console.log(`assessment speed: one day at 1 s (${DAY} samples), median of ${RUNS} runs; ${availableParallelism()} CPUs, load ${loadavg()[0]!.toFixed(2)}`);
for (const d of days) {
  const samples = simulateLoop(d.sim);
  const csv = "t,sp,pv,mv,mode\n" + samples.map((s) => `${s.t},${s.sp},${s.pv.toFixed(4)},${s.mv.toFixed(4)},${s.mode}`).join("\n") + "\n";
  const cfg = config(d.deadTimeS);
  const parse: number[] = [];
  const assess: number[] = [];
  const cpu: number[] = [];
  let label = "";
  for (let i = 0; i < RUNS; i++) {
    const c0 = process.cpuUsage();
    const t0 = performance.now();
    const parsed = parseAssessCsv(csv);
    const t1 = performance.now();
    const r = assessLoop(parsed.samples, cfg);
    const t2 = performance.now();
    const c1 = process.cpuUsage(c0);
    cpu.push((c1.user + c1.system) / 1000);
    parse.push(t1 - t0);
    assess.push(t2 - t1);
    label = r.diagnosis.label;
  }
  const p = median(parse);
  const a = median(assess);
  const c = median(cpu);
  console.log(
    `${d.name.padEnd(28)} parse ${p.toFixed(0).padStart(4)} ms  assess ${a.toFixed(0).padStart(4)} ms  total ${(p + a).toFixed(0).padStart(4)} ms wall = ${((p + a) / 1000).toFixed(2)} of the 1 s target; process CPU ${c.toFixed(0)} ms (incl. GC threads), ${((c * 1000) / DAY).toFixed(2)} µs/sample (${(csv.length / 1e6).toFixed(1)} MB CSV; finding: ${label})`,
  );
}
