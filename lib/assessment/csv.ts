/**
 * Historian exports for the assessment: a CSV with the header `t,sp,pv,mv[,mode][,quality]`
 * (columns in any order and any letter case, blanks and quotes around names, other columns
 * ignored; a unit in brackets or parentheses after a name, e.g. `pv [degC]`, `t (min)`). The
 * separator is the one of comma, semicolon and tab that finds the columns (or a spreadsheet's
 * `sep=;` first line); a decimal comma is read only with semicolons. Lines end in LF, CRLF or CR.
 * `t` is seconds (any origin; milliseconds since 1970 when too large for seconds, with a caution)
 * or an ISO 8601 date-time with a zone (csv-time.ts), one kind per file, never going back; a row
 * at the time of the row before is dropped (same values) or replaces it, with a caution. `mode`
 * is auto, manual or cascade (aut/man/cas/automatic; empty = unknown); `quality` is
 * good/bad/uncertain or an OPC quality code (>= 192 good, 64-191 uncertain, below 64 bad: common
 * practice). A value cell without a digit (empty, NaN, Bad, #N/A, I/O Timeout ...) is missing,
 * with a caution; anything else that is not a number is refused. `#` starts a comment line.
 *
 * Browser-safe (no Node APIs). One pass over the text without splitting it into an array of
 * lines, so a day at 1 s (86,400 rows) parses in tens of milliseconds. Every error names its line.
 */
import { splitQuotedCells } from "@/lib/domain/csv-cells";
import { EPOCH_MS_FROM, EPOCH_MS_TO, isPlainNumber, parseIsoSeconds, TIME_UNITS } from "./csv-time";
import { modeFault, NumberReader, parseMode, parseQuality } from "./csv-values";
import type { AssessQuality, AssessSample } from "./types";

export class AssessCsvError extends Error {
  constructor(message: string, readonly line: number, readonly column: string | null = null) {
    super(message);
    this.name = "AssessCsvError";
  }
}

export interface ParsedAssessCsv {
  samples: AssessSample[];
  /** First row's time as ISO 8601 when the file used date-times, else null. */
  startTime: string | null;
  hasMode: boolean;
  hasQuality: boolean;
  /** What was read with an assumption (missing values, repeated times, time unit): shown with the report. */
  cautions: string[];
}

/** Most rows accepted (a week at 1 s). */
export const MAX_ASSESS_ROWS = 7 * 86_400;

const COLUMNS = ["t", "sp", "pv", "mv", "mode", "quality"] as const;
type Column = (typeof COLUMNS)[number];

function trimIfNeeded(c: string): string {
  return c.length > 0 && (c.charCodeAt(0) <= 32 || c.charCodeAt(c.length - 1) <= 32) ? c.trim() : c;
}

function splitCells(line: string, sep: string): string[] {
  if (!line.includes('"')) {
    const cells = line.split(sep);
    for (let i = 0; i < cells.length; i++) cells[i] = trimIfNeeded(cells[i]!);
    return cells;
  }
  return splitQuotedCells(line, sep);
}

function headerName(cell: string): { name: string; unit: string | null } {
  const m = /^([^[(]*?)\s*(?:[[(]\s*([^\])]*?)\s*[\])])?$/.exec(cell);
  return { name: (m?.[1] ?? cell).trim().toLowerCase(), unit: m?.[2] ? m[2].trim().toLowerCase() : null };
}

/** The separator that finds most of t, sp, pv, mv in the header (then the most cells). */
function chooseSeparator(headerLine: string): string {
  let best = ",";
  let bestScore = -1;
  for (const sep of [",", ";", "\t"]) {
    const names = splitCells(headerLine, sep).map((c) => headerName(c).name);
    const score = 100 * ["t", "sp", "pv", "mv"].filter((c) => names.includes(c)).length + names.length;
    if (score > bestScore) {
      best = sep;
      bestScore = score;
    }
  }
  return best;
}

/** Lines ended by LF, CRLF or a lone CR, without splitting the text into an array. */
function lineReader(text: string): { next: () => string | null; lineNo: () => number } {
  let pos = 0;
  let lineNo = 0;
  let lf = -2;
  let cr = -2;
  const next = (): string | null => {
    if (pos >= text.length) return null;
    if (lf !== -1 && lf < pos) lf = text.indexOf("\n", pos);
    if (cr !== -1 && cr < pos) cr = text.indexOf("\r", pos);
    const end = lf < 0 ? (cr < 0 ? text.length : cr) : cr < 0 ? lf : Math.min(lf, cr);
    const line = text.slice(pos, end);
    pos = end + (text.charCodeAt(end) === 13 && text.charCodeAt(end + 1) === 10 ? 2 : 1);
    lineNo++;
    return line;
  };
  return { next, lineNo: () => lineNo };
}

const sameValue = (a: number, b: number) => a === b || (Number.isNaN(a) && Number.isNaN(b));
const sameSample = (a: AssessSample, b: AssessSample) =>
  sameValue(a.sp, b.sp) && sameValue(a.pv, b.pv) && sameValue(a.mv, b.mv) && a.mode === b.mode && a.quality === b.quality;

/**
 * Parses a historian export. Throws AssessCsvError naming the line (1-based, comments counted)
 * and the column of the first problem.
 */
export function parseAssessCsv(text: string): ParsedAssessCsv {
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  const lines = lineReader(text);
  let lineNo = 0;
  const nextLine = () => {
    const l = lines.next();
    lineNo = lines.lineNo();
    return l;
  };

  let headerLine: string | null = null;
  for (let l = nextLine(); l !== null; l = nextLine()) {
    const s = l.trim();
    if (s === "" || s.startsWith("#")) continue;
    headerLine = l;
    break;
  }
  if (headerLine === null) throw new AssessCsvError("The file is empty: expected a header line t,sp,pv,mv[,mode].", Math.max(1, lineNo));
  // A spreadsheet's "sep=;" line names the separator; the header follows it.
  const sepLine = /^"?sep=(.)"?\s*$/i.exec(headerLine);
  if (sepLine) {
    headerLine = nextLine();
    while (headerLine !== null && (headerLine.trim() === "" || headerLine.trim().startsWith("#"))) headerLine = nextLine();
    if (headerLine === null) throw new AssessCsvError("The file has no header line t,sp,pv,mv after its sep= line.", lineNo);
  }
  const headerLineNo = lineNo;
  const sep = sepLine ? sepLine[1]! : chooseSeparator(headerLine);
  const header = splitCells(headerLine, sep).map(headerName);
  const index: Partial<Record<Column, number>> = {};
  let tScale = 1;
  let tUnitGiven = false;
  header.forEach((h, i) => {
    if (!(COLUMNS as readonly string[]).includes(h.name)) return;
    const c = h.name as Column;
    if (index[c] !== undefined) throw new AssessCsvError(`Line ${headerLineNo}: the column "${c}" appears twice (columns ${index[c]! + 1} and ${i + 1}).`, headerLineNo, c);
    index[c] = i;
    if (c === "t" && h.unit) {
      const s = TIME_UNITS[h.unit];
      if (s === undefined) throw new AssessCsvError(`Line ${headerLineNo}: time unit "${h.unit}" is not one of s, ms, min, h.`, headerLineNo, "t");
      tScale = s;
      tUnitGiven = true;
    }
  });
  const missing = (["t", "sp", "pv", "mv"] as const).filter((c) => index[c] === undefined);
  if (missing.length > 0) {
    throw new AssessCsvError(
      `Line ${headerLineNo}: the header lacks ${missing.join(", ")}; expected t,sp,pv,mv (mode and quality optional), found ${header.map((h) => `"${h.name}"`).join(", ")}.`,
      headerLineNo,
      missing[0]!,
    );
  }
  const it = index.t!;
  const isp = index.sp!;
  const ipv = index.pv!;
  const imv = index.mv!;
  const imode = index.mode;
  const iq = index.quality;
  const requiredLast = Math.max(it, isp, ipv, imv);
  const needed = Math.max(requiredLast, imode ?? 0, iq ?? 0) + 1;

  const samples: AssessSample[] = [];
  const cautions: string[] = [];
  const numbers = new NumberReader(sep === ";");
  let timeKind: "seconds" | "iso" | null = null;
  let startTime: string | null = null;
  let prevT = -Infinity;
  let prevLine = 0;
  let modeUnknown = 0;
  let repeatsDropped = 0;
  let repeatsReplaced = 0;
  let firstReplaced = 0;

  const fault = (i: number, name: Column, what: string) => new AssessCsvError(`Line ${lineNo}, column ${i + 1} (${name}): ${what}`, lineNo, name);
  const value = (cells: string[], i: number, name: Column, bad: boolean): number => {
    const v = numbers.read(cells[i]!, `line ${lineNo}, column ${i + 1}`);
    if (typeof v === "string") throw fault(i, name, v);
    if (Number.isNaN(v) && !bad) numbers.noteMissing(`line ${lineNo}, column ${i + 1} ("${cells[i]!.slice(0, 20)}")`);
    return v;
  };

  for (let line = nextLine(); line !== null; line = nextLine()) {
    if (line.length === 0) continue;
    const c0 = line.charCodeAt(0);
    if (c0 === 35 /* # */ || (c0 <= 32 && line.trim() === "")) continue;
    if (samples.length >= MAX_ASSESS_ROWS) throw new AssessCsvError(`Line ${lineNo}: more than ${MAX_ASSESS_ROWS} data rows; export a shorter span or a longer period.`, lineNo);
    const cells = splitCells(line, sep);
    // A row of separators only (a spreadsheet's formatted but empty rows) holds nothing.
    if (cells.every((c) => c === "")) continue;
    // Tools that drop trailing empty cells: the optional mode and quality are then empty.
    if (cells.length < needed && cells.length > requiredLast) while (cells.length < needed) cells.push("");
    if (cells.length < needed) {
      const other = [",", ";", "\t"].find((c) => c !== sep && line!.includes(c));
      const hint = other ? ` The header is separated by "${sep === "\t" ? "tab" : sep}", this line has "${other === "\t" ? "tab" : other}".` : "";
      throw new AssessCsvError(`Line ${lineNo}: ${cells.length} cell${cells.length === 1 ? "" : "s"}, the header has ${header.length}.${hint}`, lineNo, header[cells.length]?.name ?? null);
    }
    const rawT = cells[it]!;
    let tAbs: number;
    let kind: "seconds" | "iso";
    const tn = isPlainNumber(rawT) || (sep === ";" && /^[+-]?\d*,\d+$/.test(rawT)) ? numbers.read(rawT, `line ${lineNo}, column ${it + 1}`) : NaN;
    if (typeof tn === "string") throw fault(it, "t", tn);
    if (!Number.isNaN(tn)) {
      kind = "seconds";
      if (timeKind === null && !tUnitGiven && Math.abs(tn) >= EPOCH_MS_FROM) {
        if (Math.abs(tn) >= EPOCH_MS_TO) throw fault(it, "t", `${rawT} is too large for seconds or milliseconds since 1970; give the unit in the header, e.g. "t [ms]".`);
        tScale = 0.001;
        cautions.push(`The times have no unit and are too large for seconds (${rawT}): read as milliseconds since 1970.`);
      }
      tAbs = tn * tScale;
    } else {
      kind = "iso";
      const s = parseIsoSeconds(rawT);
      if (typeof s === "string") throw fault(it, "t", `"${rawT.slice(0, 40)}" ${s}.`);
      tAbs = s;
    }
    if (timeKind === null) {
      timeKind = kind;
      if (kind === "iso" || tScale === 0.001) startTime = new Date(tAbs * 1000).toISOString();
    } else if (kind !== timeKind) {
      throw fault(it, "t", `mixes ${kind === "iso" ? "a date-time" : "seconds"} with the ${timeKind === "iso" ? "date-times" : "seconds"} above.`);
    }
    if (tAbs < prevT) throw fault(it, "t", `time goes back from line ${prevLine}; sort the rows by time (a local time without a zone cannot be sorted safely).`);
    let quality: AssessQuality | undefined;
    if (iq !== undefined) {
      const q = parseQuality(cells[iq]!);
      if (q === null) throw fault(iq, "quality", `"${cells[iq]!.slice(0, 20)}" is not good, bad, uncertain or an OPC quality code.`);
      quality = q;
    }
    const bad = quality === "bad";
    const sample: AssessSample = { t: tAbs, sp: value(cells, isp, "sp", bad), pv: value(cells, ipv, "pv", bad), mv: value(cells, imv, "mv", bad) };
    if (imode !== undefined) {
      const m = parseMode(cells[imode]!);
      if (m === null) throw fault(imode, "mode", modeFault(cells[imode]!));
      if (m === undefined) modeUnknown++;
      else sample.mode = m;
    }
    if (quality !== undefined) sample.quality = quality;
    if (tAbs === prevT) {
      // Two stored points at one instant: a historian replays the later one.
      const last = samples[samples.length - 1]!;
      if (sameSample(last, sample)) repeatsDropped++;
      else {
        if (repeatsReplaced++ === 0) firstReplaced = lineNo;
        samples[samples.length - 1] = sample;
      }
      prevLine = lineNo;
      continue;
    }
    prevT = tAbs;
    prevLine = lineNo;
    samples.push(sample);
  }
  if (samples.length < 2) throw new AssessCsvError(`Line ${lineNo}: only ${samples.length} data row${samples.length === 1 ? "" : "s"} with distinct times; an assessment needs a span of data.`, lineNo);
  if (numbers.missing > 0) cautions.push(`${numbers.missing} value cell${numbers.missing === 1 ? "" : "s"} held no number (first at ${numbers.firstMissing}): those samples are treated as bad quality.`);
  if (modeUnknown > 0) cautions.push(`${modeUnknown} row${modeUnknown === 1 ? "" : "s"} had no mode: read as unknown (treated as closed loop).`);
  if (repeatsDropped > 0) cautions.push(`${repeatsDropped} row${repeatsDropped === 1 ? "" : "s"} repeated the row before (same time, same values) and were dropped.`);
  if (repeatsReplaced > 0) cautions.push(`${repeatsReplaced} row${repeatsReplaced === 1 ? "" : "s"} had the time of the row before with other values (first at line ${firstReplaced}); the later row was kept, as a historian replays it.`);
  return { samples, startTime, hasMode: imode !== undefined, hasQuality: iq !== undefined, cautions };
}
