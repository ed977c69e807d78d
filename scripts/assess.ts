/**
 * Offline assessment of a historian export (the `assess` command):
 *
 *   npm run -s assess -- FILE.csv --config LOOP.json [--json]
 *
 * Prints one JSON object (the last and only thing on stdout) with --json, a readable summary
 * without. Exit 0 on success, 1 on a bad file or configuration (the message names the line),
 * 2 on bad arguments. Everything but the result goes to stderr.
 */
import { readFileSync } from "node:fs";
import path from "node:path";
import { AssessCsvError, assessLoop, LoopConfigError, parseAssessCsv, parseLoopConfig, type LoopAssessmentReport } from "@/lib/assessment";
import { dataCautions, loopJsonCautions, withSamplePeriod } from "@/lib/assessment/input-checks";
// Text of an export or a loop file: UTF-8 or UTF-16 as spreadsheet programs save "Unicode text" (lib/csv).
import { decodeText, withoutBom } from "@/lib/csv";

const USAGE = "usage: npm run -s assess -- FILE.csv --config LOOP.json [--json]";

function parseArgs(argv: string[]): { file: string; config: string; json: boolean } | string {
  let file: string | null = null;
  let config: string | null = null;
  let json = false;
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i]!;
    if (a === "--json") json = true;
    else if (a === "--config") {
      const v = argv[++i];
      if (!v) return "--config needs a file";
      config = v;
    } else if (a.startsWith("--config=")) config = a.slice("--config=".length);
    else if (a === "--help" || a === "-h") return USAGE;
    else if (a.startsWith("--")) return `unknown option ${a}`;
    else if (file === null) file = a;
    else return `unexpected argument ${a}`;
  }
  if (!file) return "missing FILE.csv";
  if (!config) return "missing --config LOOP.json";
  return { file, config, json };
}

function fmt(v: number | null | undefined, digits = 3): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return "—";
  return Number(v.toPrecision(digits)).toString();
}

function summary(r: LoopAssessmentReport, tag: string): string {
  const pct = (v: number | null) => (v === null ? "—" : `${(100 * v).toFixed(1)} %`);
  const lines = [
    `Loop ${tag || "(no tag)"}: ${r.samples} samples over ${fmt(r.spanS / 3600, 3)} h`,
    `Finding: ${r.diagnosis.label} (confidence ${fmt(r.diagnosis.confidence, 2)})${r.diagnosis.needsS ? `, needs about ${fmt(r.diagnosis.needsS / 60, 3)} min more data` : ""}`,
    ...r.diagnosis.evidence.map((e) => `  - ${e}`),
    ...(r.diagnosis.reason ? [`  reason: ${r.diagnosis.reason}`] : []),
    `Service factor ${pct(r.serviceFactor)}, manual ${pct(r.manual)}, output at a limit ${pct(r.saturation)}`,
    `Oscillation: ${r.oscillation.detected ? `yes, period ${fmt(r.oscillation.periodS)} s, amplitude ${fmt(r.oscillation.amplitude)}, regularity ${fmt(r.oscillation.regularity)}` : `no (regularity ${fmt(r.oscillation.regularity)})`}`,
    `Stiction: ${r.stiction.verdict}`,
    ...r.stiction.evidence.map((e) => `  - ${e}`),
    `Harris index: ${fmt(r.harrisIndex)}   idle index: ${fmt(r.details.idleIndex, 2)}`,
    `Valve travel ${fmt(r.details.valveTravelPctPerHour)} %/h, reversals ${fmt(r.details.valveReversalsPerHour)} /h, PV noise band ±${fmt(r.details.noiseBand)}`,
    `Own closed-loop poles: ${r.poles.length ? r.poles.map((p) => `${fmt(p.re, 4)}${p.im >= 0 ? "+" : "-"}${fmt(Math.abs(p.im), 4)}j`).join(", ") + ` (radius ${fmt(r.spectralRadius, 4)})` : "not identifiable from these data"}`,
    `Disturbance response (routine data, not the loop's poles): ${r.disturbanceResponse ? `radius ${fmt(r.disturbanceResponse.spectralRadius, 4)}` : "—"}`,
    ...(r.cautions.length ? ["Cautions:", ...r.cautions.map((c) => `  - ${c}`)] : []),
    "Advisory only: findings are likely causes to check, not certainties; changes follow the site's management of change.",
  ];
  return lines.join("\n");
}

/** npm runs scripts in the package root; relative paths are the caller's (INIT_CWD). */
function resolvePath(p: string): string {
  return path.resolve(process.env.INIT_CWD ?? process.cwd(), p);
}

/** A file that cannot be read, in words (the system's code stays at the end for searching). */
function readProblem(e: unknown): string {
  const code = (e as NodeJS.ErrnoException | null)?.code;
  if (code === "ENOENT") return "no such file (ENOENT)";
  if (code === "EACCES" || code === "EPERM") return `not readable: permission denied (${code})`;
  if (code === "EISDIR") return "is a folder, not a file (EISDIR)";
  if (e instanceof SyntaxError) return `not valid JSON: ${e.message}`;
  return e instanceof Error ? e.message : String(e);
}

function main(): number {
  const args = parseArgs(process.argv.slice(2));
  if (typeof args === "string") {
    process.stderr.write(`${args}\n${args === USAGE ? "" : USAGE + "\n"}`);
    return args === USAGE ? 0 : 2;
  }
  let configJson: unknown;
  try {
    configJson = JSON.parse(withoutBom(decodeText(readFileSync(resolvePath(args.config)))));
  } catch (e) {
    process.stderr.write(`${args.config}: ${readProblem(e)}\n`);
    return 1;
  }
  let text: string;
  try {
    text = decodeText(readFileSync(resolvePath(args.file)));
  } catch (e) {
    process.stderr.write(`${args.file}: ${readProblem(e)}\n`);
    return 1;
  }
  try {
    const parsed = parseAssessCsv(text);
    const period = withSamplePeriod(configJson, parsed.samples);
    const config = parseLoopConfig(period.value);
    const report = assessLoop(parsed.samples, config);
    // How the inputs were read comes first among the cautions (the report's shape is unchanged).
    report.cautions = [...parsed.cautions, ...(period.caution ? [period.caution] : []), ...loopJsonCautions(configJson), ...dataCautions(parsed.samples, config), ...report.cautions];
    process.stdout.write(args.json ? `${JSON.stringify(report)}\n` : `${summary(report, config.tag)}\n`);
    return 0;
  } catch (e) {
    if (e instanceof AssessCsvError) process.stderr.write(`${args.file}: ${e.message}\n`);
    else if (e instanceof LoopConfigError) process.stderr.write(`${args.config}: ${e.message}\n`);
    else throw e;
    return 1;
  }
}

process.exitCode = main();
