/**
 * The labelled benchmark of routine-data recordings: three seed sets of 176 recordings each (20
 * per label for the eight labels, 16 borderline cases labelled `undetermined`), spread over four
 * plant types. DEV is for tuning the assessment; FROZEN and HOLDOUT are never used for tuning
 * and are reported separately (FROZEN was looked at once, so HOLDOUT is the honest figure). Every recording comes from its set and index alone (seeded).
 *
 * As a command it writes recordings as the offline assessment reads them:
 *   node --import tsx simulators/benchmark/generate.ts --set dev --out DIR [--count N] [--label L]
 * gives DIR/<id>.csv, DIR/<id>.loop.json and DIR/<id>.truth.json.
 */
import { mkdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { parseArgs } from "node:util";
import { deriveSeed, Prng } from "../prng";
import { auditRecording } from "./audit";
import { BORDERLINE, drawCase, LABELS, type BenchLabel, type BorderlineKind, type CaseDraw } from "./cases";
import { recordingCsv } from "./files";
import { applyHistorian, drawHistorian, type HistorianEffects } from "./historian";
import { PLANT_TYPES, type LoopKind, type PlantType } from "./loops";
import { simulateRecording, type RecordedSample, type RecordingTruth } from "./recording-sim";

export type BenchSet = "dev" | "frozen" | "holdout";
export const BENCH_SETS: readonly BenchSet[] = ["dev", "frozen", "holdout"];
export { LABELS, type BenchLabel };

/** LOOP.json as an engineer enters it (the offline assessment's configuration file). */
export interface LoopConfigJson {
  tag: string;
  description: string;
  kind: LoopKind;
  units: string;
  pvLo: number;
  pvHi: number;
  samplePeriodS: number;
  deadTimeS?: number;
  normalMode: "auto" | "cascade";
  controller: {
    kp: number;
    ti: number | null;
    td: number;
    action: "reverse" | "direct";
    mvLo: number;
    mvHi: number;
    form: "ideal" | "parallel" | "series";
    derivativeOn: "pv" | "error";
    derivativeFilterS: number;
  };
}

export interface BenchRecording {
  id: string;
  set: BenchSet;
  index: number;
  seed: number;
  label: BenchLabel;
  /** Other verdicts a practitioner would accept for a borderline case. */
  alsoAccept: BenchLabel[];
  plantType: PlantType;
  note: string;
  samples: RecordedSample[];
  config: LoopConfigJson;
  truth: RecordingTruth;
  draw: CaseDraw;
  historian: HistorianEffects;
  /** How often the draw was repeated to meet the label's definition, and what still fails it. */
  redraws: number;
  auditProblems: string[];
}

export interface PlanEntry {
  index: number;
  label: BenchLabel;
  plantType: PlantType;
  borderline?: BorderlineKind;
}

const PER_LABEL = 20;
// HOLDOUT: fresh seeds drawn after FROZEN had been looked at once; it is run once, at the end
// of a round of tuning, and its per-recording results are not listed.
const BASE_SEED: Record<BenchSet, number> = { dev: 0x2f1d_0b57, frozen: 0x6a93_c4e1, holdout: 0x51c7_e28d };

/** The recordings of a set, in order: 20 per label (plant types in turn), then the borderline cases. */
export function benchmarkPlan(): PlanEntry[] {
  const out: PlanEntry[] = [];
  for (const label of LABELS) {
    for (let i = 0; i < PER_LABEL; i++) out.push({ index: out.length, label, plantType: PLANT_TYPES[i % PLANT_TYPES.length]! });
  }
  for (const borderline of BORDERLINE) {
    for (const plantType of PLANT_TYPES) out.push({ index: out.length, label: "undetermined", plantType, borderline });
  }
  return out;
}

/**
 * The seed of one recording. `studyBase` replaces the set's base seed: a study set drawn like the
 * others from a base of one's own (`npm run bench:assess -- --study N`), for looking at many more
 * cases of one failure mode than DEV holds without touching FROZEN or HOLDOUT.
 */
export function recordingSeed(set: BenchSet, index: number, studyBase?: number): number {
  return deriveSeed(studyBase ?? BASE_SEED[set], `recording-${index}`);
}

const sig = (v: number, digits = 4) => Number(v.toPrecision(digits));

function loopJson(draw: CaseDraw): LoopConfigJson {
  const { spec, loop } = draw;
  const T = spec.controllerPeriodS * spec.every;
  return {
    tag: loop.instrument.tag,
    description: loop.instrument.description,
    kind: loop.instrument.kind,
    units: loop.instrument.units,
    pvLo: loop.instrument.pvRange[0],
    pvHi: loop.instrument.pvRange[1],
    samplePeriodS: sig(T),
    ...(draw.deadTimeKnown ? { deadTimeS: sig(loop.plant.deadTimeS) } : {}),
    normalMode: spec.normalMode,
    controller: {
      kp: sig(spec.controller.kp),
      ti: spec.controller.ti === null ? null : sig(spec.controller.ti),
      td: sig(spec.controller.td),
      action: spec.controller.action,
      mvLo: spec.mvLimitsPct[0],
      mvHi: spec.mvLimitsPct[1],
      form: spec.controller.form,
      derivativeOn: "error",
      derivativeFilterS: sig(spec.controller.td / 10),
    },
  };
}

const REDRAWS = 6;
const COMPRESSIBLE = new Set<BenchLabel>(["healthy", "sluggish-tuning", "external-disturbance", "saturated", "manual"]);

/**
 * One recording of a set (deterministic). A draw whose simulated truth does not meet its label's
 * definition (`auditRecording`: e.g. a sticking valve that never slipped) is drawn again from a
 * derived seed, up to REDRAWS times; `redraws` says how often, `auditProblems` what is left.
 */
export function generateRecording(set: BenchSet, index: number, studyBase?: number): BenchRecording {
  const plan = benchmarkPlan()[index];
  if (!plan) throw new RangeError(`no recording ${index} in the benchmark (0..${benchmarkPlan().length - 1})`);
  const seed = recordingSeed(set, index, studyBase);
  let rec = drawRecording(set, plan, seed, 0);
  for (let i = 1; i < REDRAWS && rec.auditProblems.length > 0; i++) rec = drawRecording(set, plan, deriveSeed(seed, `redraw-${i}`), i);
  if (studyBase !== undefined) rec.id = rec.id.replace(`${set}-`, `study${studyBase}-`);
  return rec;
}

function drawRecording(set: BenchSet, plan: PlanEntry, seed: number, redraws: number): BenchRecording {
  const index = plan.index;
  const rng = new Prng(seed);
  const draw = drawCase(rng, deriveSeed(seed, "noise"), plan.label, plan.plantType, plan.borderline);
  // the loop's controller settings as written in its configuration are what the simulation runs
  const config = loopJson(draw);
  draw.spec.controller = { ...draw.spec.controller, kp: config.controller.kp, ti: config.controller.ti, td: config.controller.td };
  const raw = simulateRecording(draw.spec);
  // the historian: dead-band compression on some recordings whose label survives it (not where
  // the evidence is a small cycle or a flat line), missing rows on some of every label
  const hrng = new Prng(deriveSeed(seed, "historian"));
  const compress = COMPRESSIBLE.has(draw.label) && hrng.chance(0.15);
  const historian = drawHistorian(hrng, raw.samples.length, config.pvHi - config.pvLo, draw.spec.noiseSdPct, compress, hrng.chance(0.1));
  const { samples, truth } = applyHistorian(raw.samples, raw.truth, historian);
  let note = draw.note;
  if (historian.compression) note += `; historian dead band ${historian.compression.export === "hold" ? "held" : "interpolated"}`;
  if (historian.gaps.length) note += `; ${historian.gaps.length} gap(s) in the export`;
  const rec: BenchRecording = {
    id: `${set}-${String(index).padStart(3, "0")}-${plan.borderline ?? plan.label}`,
    set,
    index,
    seed,
    label: draw.label,
    alsoAccept: draw.alsoAccept,
    plantType: plan.plantType,
    note,
    samples,
    config,
    truth,
    draw,
    historian,
    redraws,
    auditProblems: [],
  };
  rec.auditProblems = auditRecording(rec);
  return rec;
}

/** Is a verdict right for this recording (its label, or a verdict fair for a borderline case)? */
export function isCorrect(rec: Pick<BenchRecording, "label" | "alsoAccept">, verdict: string): boolean {
  return verdict === rec.label || rec.alsoAccept.includes(verdict as BenchLabel);
}

/** Write CSV + LOOP.json + truth.json of a recording into `dir`; returns the paths. */
export function writeRecordingFiles(rec: BenchRecording, dir: string): { csv: string; config: string; truth: string } {
  mkdirSync(dir, { recursive: true });
  const csv = join(dir, `${rec.id}.csv`);
  const config = join(dir, `${rec.id}.loop.json`);
  const truth = join(dir, `${rec.id}.truth.json`);
  // a quarter of the files carry ISO 8601 times with a zone, as some historians export them
  // and some leave a bad reading's cell empty
  const rng = new Prng(deriveSeed(rec.seed, "csv"));
  const iso = rng.chance(0.25);
  const blankBad = rng.chance(0.5);
  writeFileSync(csv, recordingCsv(rec.samples, rec.config, { ...(iso ? { startIso: "2026-11-23T06:00:00+01:00" } : {}), blankBad }));
  writeFileSync(config, `${JSON.stringify(rec.config, null, 2)}\n`);
  writeFileSync(truth, `${JSON.stringify({ id: rec.id, label: rec.label, alsoAccept: rec.alsoAccept, plantType: rec.plantType, note: rec.note, seed: rec.seed }, null, 2)}\n`);
  return { csv, config, truth };
}

async function main(): Promise<void> {
  const { values } = parseArgs({
    options: { set: { type: "string", default: "dev" }, out: { type: "string" }, count: { type: "string" }, label: { type: "string" } },
  });
  const set = values.set as BenchSet;
  if (!BENCH_SETS.includes(set)) throw new Error(`--set must be dev, frozen or holdout (got ${set})`);
  if (!values.out) throw new Error("--out DIR is required");
  const plan = benchmarkPlan().filter((p) => !values.label || p.label === values.label || p.borderline === values.label);
  const count = values.count ? Number(values.count) : plan.length;
  for (const p of plan.slice(0, count)) {
    const rec = generateRecording(set, p.index);
    const files = writeRecordingFiles(rec, values.out);
    console.log(`${rec.id}  ${rec.samples.length} samples  ${files.csv}`);
  }
}

if (import.meta.url === `file://${process.argv[1]}`) {
  main().catch((e: unknown) => {
    console.error((e as Error).message);
    process.exit(1);
  });
}
