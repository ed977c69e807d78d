/**
 * Independent cross-check of the routine-data assessment: labelled historian exports made by a
 * Python generator that shares no code with our TypeScript simulators (simulators/crosscheck/,
 * Debian's python3-numpy and python3-scipy), assessed through the same code the `assess` command
 * uses (parseAssessCsv + parseLoopConfig + assessLoop on the files). A measurement, not a test:
 * it prints accuracy per label, the confusion matrix and every miss with its verdict and the
 * first line of its evidence.
 *
 *   npm run bench:crosscheck [-- --seed N] [--dir DIR]
 *
 * RG_PYTHON or PYTHON names the interpreter (default Debian's python3, tests/helpers/python.ts; it must have numpy and scipy).
 * --dir keeps the generated files in DIR (and reuses them when DIR already has a manifest).
 */
import { execFileSync } from "node:child_process";
import { existsSync, mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { parseArgs } from "node:util";
import { assessLoop, parseAssessCsv, parseLoopConfig } from "@/lib/assessment";
import { pct, printAccuracy, printConfusion } from "./label-table";
import { PYTHON } from "../helpers/python";

const { values: opts } = parseArgs({ options: { seed: { type: "string", default: "20071" }, dir: { type: "string" } } });

interface ManifestRow {
  id: string;
  label: string;
  plant: string;
  note: string;
}

const started = performance.now();
const dir = opts.dir ?? mkdtempSync(join(tmpdir(), "rg-crosscheck-"));
try {
  if (!existsSync(join(dir, "manifest.json"))) {
    execFileSync(PYTHON, ["simulators/crosscheck/generate.py", dir, "--seed", opts.seed], { stdio: ["ignore", "inherit", "inherit"], env: { ...process.env, PYTHONDONTWRITEBYTECODE: "1" } });
  }
  const manifest = JSON.parse(readFileSync(join(dir, "manifest.json"), "utf8")) as ManifestRow[];
  const res = manifest.map((m) => {
    const config = parseLoopConfig(JSON.parse(readFileSync(join(dir, `${m.id}.loop.json`), "utf8")));
    const parsed = parseAssessCsv(readFileSync(join(dir, `${m.id}.csv`), "utf8"));
    const r = assessLoop(parsed.samples, config);
    const d = r.diagnosis;
    return { ...m, verdict: d.label, confidence: d.confidence, correct: d.label === m.label, top: d.evidence[0] ?? d.reason ?? "", deadTime: config.deadTimeS };
  });
  console.log(`\n=== CROSS-CHECK (seed ${opts.seed}): ${res.length} recordings ===`);
  printAccuracy(res, true);
  const ok = res.filter((r) => r.correct).length;
  console.log(`overall: ${ok}/${res.length} ${pct(ok, res.length)}`);
  printConfusion(res);
  console.log("\naccuracy per plant type");
  for (const t of [...new Set(res.map((r) => r.plant))]) {
    const rows = res.filter((r) => r.plant === t);
    console.log(`  ${t.padEnd(20)}${String(rows.length).padStart(4)}  ${pct(rows.filter((r) => r.correct).length, rows.length)}`);
  }
  const sure = res.filter((r) => r.confidence >= 0.8);
  console.log(`verdicts with confidence >= 0.8: ${sure.length}, right ${pct(sure.filter((r) => r.correct).length, sure.length)}`);
  const misses = res.filter((r) => !r.correct);
  if (misses.length) console.log(`\nmisses (${misses.length}):`);
  for (const m of misses) console.log(`  ${m.id.padEnd(22)} ${m.label} -> ${m.verdict} (${m.confidence.toFixed(2)})  [${m.note}; dead time ${m.deadTime === null ? "not configured" : `${m.deadTime} s configured`}]\n      ${m.top.slice(0, 220)}`);
} finally {
  if (!opts.dir) rmSync(dir, { recursive: true, force: true });
}
console.log(`\nbench:crosscheck done in ${((performance.now() - started) / 1000).toFixed(0)} s`);
