/**
 * Checks of an offline assessment's inputs that are not faults but change what the figures mean:
 * a loop file written by another tool (numbers as strings, enum words in capitals, defaults taken
 * for fields it left out) and data outside the configured ranges or at a spacing far from the
 * loop's sample period (a time column in another unit). The findings are cautions shown with
 * the report; nothing is changed in the data.
 */
import { isPlainNumber } from "@/lib/csv";
import type { LoopConfig } from "./config";
import { median } from "./signal";
import type { AssessSample } from "./types";

const NUMBER_FIELDS = ["pvLo", "pvHi", "samplePeriodS", "deadTimeS", "stepTestDeadTimeS"];
const CONTROLLER_NUMBER_FIELDS = ["kp", "ti", "td", "mvLo", "mvHi", "derivativeFilterS"];
const ENUM_FIELDS = ["kind", "normalMode"];
const CONTROLLER_ENUM_FIELDS = ["action", "form", "derivativeOn"];

const isRecord = (v: unknown): v is Record<string, unknown> => typeof v === "object" && v !== null && !Array.isArray(v);

function normaliseFields(o: Record<string, unknown>, numbers: string[], enums: string[]): Record<string, unknown> {
  const out = { ...o };
  for (const k of numbers) {
    const v = out[k];
    if (typeof v === "string" && isPlainNumber(v.trim())) out[k] = Number(v.trim());
  }
  for (const k of enums) {
    const v = out[k];
    if (typeof v === "string") out[k] = v.trim().toLowerCase();
  }
  return out;
}

/**
 * A loop file as another tool may write it, made readable without guessing: numbers written as
 * strings of a plain decimal number ("1.5", not "1,5") become numbers, enum words lose case and
 * blanks. Anything else is left for the schema to refuse.
 */
export function normaliseLoopJson(value: unknown): unknown {
  if (!isRecord(value)) return value;
  const out = normaliseFields(value, NUMBER_FIELDS, ENUM_FIELDS);
  if (isRecord(out.controller)) out.controller = normaliseFields(out.controller, CONTROLLER_NUMBER_FIELDS, CONTROLLER_ENUM_FIELDS);
  return out;
}

/** Defaults taken for fields the loop file left out that change the figures. */
export function loopJsonCautions(value: unknown): string[] {
  const c = isRecord(value) && isRecord(value.controller) ? value.controller : {};
  const out: string[] = [];
  if (!("ti" in c)) out.push("controller.ti not given: read as no integral action.");
  if (!("action" in c)) out.push("controller.action not given: reverse acting assumed.");
  if (!("mvLo" in c) || !("mvHi" in c)) out.push("controller.mvLo/mvHi not given: MV read in % (0 to 100).");
  return out;
}

/**
 * A loop file without `samplePeriodS` (the figures need the export's own spacing): the export's
 * median spacing, with a caution saying so. The offline command's reading; a loop in the console
 * always has its period.
 */
export function withSamplePeriod(value: unknown, samples: readonly AssessSample[]): { value: unknown; caution: string | null } {
  if (!isRecord(value) || value.samplePeriodS !== undefined || samples.length < 2) return { value, caution: null };
  const d = new Float64Array(samples.length - 1);
  for (let i = 1; i < samples.length; i++) d[i - 1] = samples[i]!.t - samples[i - 1]!.t;
  const spacing = median(d);
  if (!(spacing > 0)) return { value, caution: null };
  return { value: { ...value, samplePeriodS: spacing }, caution: `samplePeriodS not given: read as the export's median spacing, ${fmt(spacing)} s.` };
}

/** A value this far outside its configured range (share of the range) is worth a caution. */
const OUTSIDE = 0.1;
/** Stored points closer than this share of the loop's sample period suggest a time column in another unit. */
const DENSE = 0.01;

function extent(samples: readonly AssessSample[], pick: (s: AssessSample) => number): [number, number] {
  let lo = Infinity;
  let hi = -Infinity;
  for (const s of samples) {
    const v = pick(s);
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  return [lo, hi];
}

const fmt = (v: number) => Number(v.toPrecision(4)).toString();

/** Data that do not fit the loop file: PV/SP or MV well outside the ranges, spacing far below the sample period. */
export function dataCautions(samples: readonly AssessSample[], config: LoopConfig): string[] {
  const out: string[] = [];
  const { pvLo, pvHi } = config;
  const { mvLo, mvHi } = config.controller;
  const [pvMin, pvMax] = extent(samples, (s) => s.pv);
  const [spMin, spMax] = extent(samples, (s) => s.sp);
  const pLo = Math.min(pvMin, spMin);
  const pvTop = Math.max(pvMax, spMax);
  const pvSpan = pvHi - pvLo;
  if (pLo < pvLo - OUTSIDE * pvSpan || pvTop > pvHi + OUTSIDE * pvSpan) {
    out.push(`PV/SP run from ${fmt(pLo)} to ${fmt(pvTop)}, well outside pvLo..pvHi (${fmt(pvLo)}..${fmt(pvHi)}): figures in % of span scale with that range; check its units.`);
  }
  const [uLo, uHi] = extent(samples, (s) => s.mv);
  const mvSpan = mvHi - mvLo;
  if (uLo < mvLo - OUTSIDE * mvSpan || uHi > mvHi + OUTSIDE * mvSpan) {
    out.push(`MV runs from ${fmt(uLo)} to ${fmt(uHi)}, well outside mvLo..mvHi (${fmt(mvLo)}..${fmt(mvHi)}): output-limit and valve figures read MV in those units; check them.`);
  } else if (mvLo === 0 && mvHi >= 50 && uLo >= 0 && uHi <= 1 && uHi > uLo) {
    // an output written as a fraction (0-1) instead of % keeps to 1 % of a 0-100 % range
    out.push(`MV stays between ${fmt(uLo)} and ${fmt(uHi)} of a ${fmt(mvLo)}..${fmt(mvHi)} range: if it is written as a fraction of the output, give mvHi 1 (or MV in %), or output limits are never seen.`);
  }
  if (samples.length > 1) {
    const d = new Float64Array(samples.length - 1);
    for (let i = 1; i < samples.length; i++) d[i - 1] = samples[i]!.t - samples[i - 1]!.t;
    const spacing = median(d);
    if (spacing < DENSE * config.samplePeriodS) {
      // a spreadsheet's serial date-time counts days (since 1899-12-30: about 20,000 to 80,000 for the years 1955 to 2119)
      const t0 = samples[0]!.t;
      const days = t0 > 20_000 && t0 < 80_000 && spacing * 86_400 > 0.2 * config.samplePeriodS && spacing * 86_400 < 5 * config.samplePeriodS;
      out.push(`Stored points are ${fmt(spacing)} s apart, under 1/100 of the loop's ${fmt(config.samplePeriodS)} s sample period: check the unit of the time column${days ? ` (the times look like a spreadsheet's serial days, ${fmt(spacing * 86_400)} s apart if read so: write "t [d]" in the header, or export seconds or date-times with a zone)` : ""}.`);
    }
  }
  return out;
}
