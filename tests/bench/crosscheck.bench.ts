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
 * --evidence adds each miss's evidence lines and the figures the diagnosis weighed; --dump FILE
 * appends one JSON line per recording (label, verdict, figures, evidence; tests/bench/assess-dump.ts).
 * --dead-time step-test replaces each configured dead time (the plant's transport delay) by the
 * apparent dead time this product's step-test fit gives for the plant (crosscheck-dead-time.ts): a
 * study of what the configured figure means, not the scoring run.
 */
import { execFileSync } from "node:child_process";
import { existsSync, mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { parseArgs } from "node:util";
import { assessLoop, parseAssessCsv, parseLoopConfig } from "@/lib/assessment";
import { dumpLine, keyFigures, printMissEvidence } from "./assess-dump";
import { stepTestDeadTime, type CrosscheckPlant } from "./crosscheck-dead-time";
import { pct, printAccuracy, printConfusion } from "./label-table";
import { PYTHON } from "../helpers/python";

const { values: opts } = parseArgs({ options: { seed: { type: "string", default: "20071" }, dir: { type: "string" }, evidence: { type: "boolean", default: false }, dump: { type: "string" }, "dead-time": { type: "string", default: "transport" } } });

interface ManifestRow {
  id: string;
  label: string;
  plant: string;
  note: string;
  plantParams?: CrosscheckPlant;
}
if (!["transport", "step-test"].includes(opts["dead-time"]!)) throw new Error(`--dead-time must be transport or step-test (got ${opts["dead-time"]})`);

const started = performance.now();
const dir = opts.dir ?? mkdtempSync(join(tmpdir(), "rg-crosscheck-"));
try {
  if (!existsSync(join(dir, "manifest.json"))) {
    execFileSync(PYTHON, ["simulators/crosscheck/generate.py", dir, "--seed", opts.seed], { stdio: ["ignore", "inherit", "inherit"], env: { ...process.env, PYTHONDONTWRITEBYTECODE: "1" } });
  }
  const manifest = JSON.parse(readFileSync(join(dir, "manifest.json"), "utf8")) as ManifestRow[];
  const res = manifest.map((m) => {
    const config = parseLoopConfig(JSON.parse(readFileSync(join(dir, `${m.id}.loop.json`), "utf8")));
    if (opts["dead-time"] === "step-test" && config.deadTimeS !== null) {
      if (!m.plantParams) throw new Error("--dead-time step-test needs a manifest with the plants' parameters (regenerate the files)");
      const fitted = stepTestDeadTime(m.plantParams, config.samplePeriodS);
      if (fitted !== null) config.deadTimeS = Number(fitted.toPrecision(3));
    }
    const parsed = parseAssessCsv(readFileSync(join(dir, `${m.id}.csv`), "utf8"));
    const r = assessLoop(parsed.samples, config);
    const d = r.diagnosis;
    const figures = keyFigures(r, config);
    if (opts.dump) dumpLine(opts.dump, { seed: opts.seed, id: m.id, plantType: m.plant, label: m.label, note: m.note, verdict: d.label, confidence: d.confidence, correct: d.label === m.label, figures, evidence: d.evidence });
    return { ...m, verdict: d.label, confidence: d.confidence, correct: d.label === m.label, top: d.evidence[0] ?? d.reason ?? "", deadTime: config.deadTimeS, figures, evidence: d.evidence };
  });
  console.log(`\n=== CROSS-CHECK (seed ${opts.seed}${opts["dead-time"] === "step-test" ? ", dead times from a step-test fit" : ""}): ${res.length} recordings ===`);
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
  for (const m of misses) {
    console.log(`  ${m.id.padEnd(22)} ${m.label} -> ${m.verdict} (${m.confidence.toFixed(2)})  [${m.note}; dead time ${m.deadTime === null ? "not configured" : `${m.deadTime} s configured`}]\n      ${m.top.slice(0, 220)}`);
    if (opts.evidence) printMissEvidence(m.id, m.evidence, m.figures);
  }
} finally {
  if (!opts.dir) rmSync(dir, { recursive: true, force: true });
}
console.log(`\nbench:crosscheck done in ${((performance.now() - started) / 1000).toFixed(0)} s`);
