/**
 * Same-results check for speed work on the assessment (not part of `npm run bench`): writes, or
 * compares against, every report `assessLoop` gives on the 176 DEV recordings of the labelled
 * benchmark, plus every result the live assessor gives while a few of them stream through it at
 * its default window (the filling runs included). Comparison is util.isDeepStrictEqual (Object.is
 * on numbers: -0, NaN and the last bit count), so a pure speed change must print "identical".
 *
 *   node --import tsx tests/bench/assess-same.ts --save FILE     (on the code before the change)
 *   node --import tsx tests/bench/assess-same.ts --check FILE    (after it; exit code 1 on a difference)
 */
import { readFileSync, writeFileSync } from "node:fs";
import { isDeepStrictEqual } from "node:util";
import { deserialize, serialize } from "node:v8";
import { assessLoop, parseLoopConfig } from "@/lib/assessment";
import type { SampleDto } from "@/lib/domain/types";
import { LiveAssessor } from "@/server/assessment/assessor";
import { benchmarkPlan, generateRecording } from "@/simulators/benchmark/generate";

const save = process.argv.indexOf("--save");
const check = process.argv.indexOf("--check");
const file = process.argv[Math.max(save, check) + 1];
if ((save < 0) === (check < 0) || !file) throw new Error("usage: assess-same.ts --save FILE | --check FILE");

const T0_MS = Date.UTC(2026, 11, 2, 6, 0, 0);
const results: [string, unknown][] = [];
const cpu0 = process.cpuUsage();
const plan = benchmarkPlan();
for (const p of plan) {
  const rec = generateRecording("dev", p.index);
  const config = parseLoopConfig(rec.config);
  results.push([`offline ${rec.id}`, assessLoop(rec.samples, config)]);
  // Every eighth recording also streams through the live assessor (window 3,600, its own schedule).
  if (p.index % 8 !== 0) continue;
  const live = new LiveAssessor({ now: () => 0, onResult: (r) => results.push([`live ${rec.id} n=${r.windowSamples}`, r]) });
  live.upsertLoop({ loopId: 1, tenantId: 1, siteId: 1, config });
  const tele: SampleDto[] = rec.samples.map((s) => ({ t: T0_MS + Math.round(s.t * 1000), sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode ?? "auto", ...(s.quality ? { quality: s.quality } : {}) }));
  for (let i = 0; i < tele.length; i += 10) {
    live.push(1, tele.slice(i, i + 10));
    live.runDue(Infinity);
  }
}
const cpu = process.cpuUsage(cpu0);
console.log(`${results.length} reports (${plan.length} recordings offline), ${((cpu.user + cpu.system) / 1e6).toFixed(1)} s CPU`);

if (save >= 0) {
  writeFileSync(file, serialize(results));
  console.log(`saved to ${file}`);
} else {
  const before = deserialize(readFileSync(file)) as [string, unknown][];
  let diff = before.length === results.length ? 0 : 1;
  if (diff) console.log(`count differs: ${before.length} before, ${results.length} now`);
  for (let i = 0; i < Math.min(before.length, results.length); i++) {
    const [k0, r0] = before[i]!;
    const [k1, r1] = results[i]!;
    if (k0 === k1 && isDeepStrictEqual(r0, r1)) continue;
    if (diff++ < 5) console.log(`differs: ${k0} / ${k1}`);
  }
  console.log(diff ? `${diff} differences` : "identical");
  process.exitCode = diff ? 1 : 0;
}
