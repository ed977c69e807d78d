/**
 * Same-results check for speed work on the assessment (not part of `npm run bench`): writes, or
 * compares against, every report `assessLoop` gives on the 176 DEV recordings of the labelled
 * benchmark, plus every result the live assessor gives while a few of them stream through it at
 * its default window (the filling runs included). Comparison is util.isDeepStrictEqual (Object.is
 * on numbers: -0, NaN and the last bit count) per recording and window size. Offline reports and
 * the live runs while windows fill must be identical; full-window runs are tallied apart, since a
 * change of the steady re-run interval moves them in time (with the same schedule they match too).
 *
 * With `--rel TOL` a report that is not identical still passes when every number is within TOL
 * relative (|a - b| <= TOL·max(|a|, |b|)) and everything else (strings, verdicts, array lengths)
 * is identical: for a change of the arithmetic's order, such as another FFT, that moves the last
 * bits only. Such reports are tallied apart.
 *
 *   node --import tsx tests/bench/assess-same.ts --save FILE     (on the code before the change)
 *   node --import tsx tests/bench/assess-same.ts --check FILE [--rel 1e-12]   (after it; exit code 1 on a difference)
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
if ((save < 0) === (check < 0) || !file) throw new Error("usage: assess-same.ts --save FILE | --check FILE [--rel TOL]");
const relAt = process.argv.indexOf("--rel");
const rel = relAt >= 0 ? Number(process.argv[relAt + 1]) : 0;
if (!(rel >= 0 && rel < 1)) throw new Error("--rel needs a relative tolerance in [0, 1)");

/** Equal but for numbers within `rel` relative (NaN equals NaN); the worst relative difference goes to `worst`. */
function close(a: unknown, b: unknown, worst: { rel: number }): boolean {
  if (typeof a === "number" && typeof b === "number") {
    if (Object.is(a, b) || (a === b)) return true;
    const d = Math.abs(a - b) / Math.max(Math.abs(a), Math.abs(b));
    worst.rel = Math.max(worst.rel, d);
    return d <= rel;
  }
  if (typeof a !== "object" || typeof b !== "object" || a === null || b === null) return isDeepStrictEqual(a, b);
  if (Array.isArray(a) !== Array.isArray(b) || ArrayBuffer.isView(a) !== ArrayBuffer.isView(b)) return false;
  const ka = Object.keys(a);
  const kb = Object.keys(b);
  if (!isDeepStrictEqual(ka, kb)) return false;
  return ka.every((k) => close((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], worst));
}

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
  // Keyed by recording and window size: a schedule change moves full-window runs (n = 3600) in time,
  // so those are listed apart; offline reports and the runs while windows fill must not change.
  const kind = (k: string) => (k.startsWith("offline") ? "offline" : k.endsWith("n=3600") ? "live, full window" : "live, filling");
  const old = new Map<string, unknown[]>();
  for (const [k, r] of before) old.set(k, [...(old.get(k) ?? []), r]);
  const seen = new Map<string, number>();
  const tally = new Map<string, { same: number; close: number; differ: number; onlyNow: number }>();
  const worst = { rel: 0 };
  let shown = 0;
  for (const [k, r] of results) {
    const i = seen.get(k) ?? 0;
    seen.set(k, i + 1);
    const t = tally.get(kind(k)) ?? { same: 0, close: 0, differ: 0, onlyNow: 0 };
    tally.set(kind(k), t);
    const prev = old.get(k)?.[i];
    if (prev === undefined) t.onlyNow++;
    else if (isDeepStrictEqual(prev, r)) t.same++;
    else if (rel > 0 && close(prev, r, worst)) t.close++;
    else {
      t.differ++;
      if (shown++ < 5) console.log(`differs: ${k} (#${i + 1})`);
    }
  }
  const onlyBefore = new Map<string, number>();
  for (const [k, rs] of old) onlyBefore.set(kind(k), (onlyBefore.get(kind(k)) ?? 0) + Math.max(0, rs.length - (seen.get(k) ?? 0)));
  let bad = false;
  for (const [k, t] of tally) {
    console.log(`${k}: ${t.same} identical,${rel > 0 ? ` ${t.close} within ${rel} relative,` : ""} ${t.differ} differ, ${t.onlyNow} only now, ${onlyBefore.get(k) ?? 0} only before`);
    if (k !== "live, full window" && (t.differ || t.onlyNow || onlyBefore.get(k))) bad = true;
  }
  if (rel > 0) console.log(`largest relative difference of a number: ${worst.rel.toExponential(2)}`);
  console.log(bad ? "results changed" : rel > 0 ? `offline reports and filling runs identical or within ${rel} relative` : "offline reports and filling runs identical");
  process.exitCode = bad ? 1 : 0;
}
