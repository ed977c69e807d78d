/**
 * Historian exports for the assessment: a CSV with the header `t,sp,pv,mv[,mode][,quality]`
 * (columns in any order and any letter case, other columns ignored; a unit in brackets after a
 * name is allowed, e.g. `pv [degC]`, `t [min]`). `t` is seconds (a number, any origin) or an ISO
 * 8601 date-time with a zone, the same kind on every row, strictly increasing. `mode` is auto,
 * manual or cascade (man/cas accepted); `quality` is good/bad/uncertain or an OPC quality code
 * (>= 192 good, 64-191 uncertain, below 64 bad: common practice). A cell of sp/pv/mv may be empty
 * only on a row whose quality is bad. Lines starting with `#` are comments.
 *
 * Browser-safe (no Node APIs). One pass over the text without splitting it into an array of
 * lines, so a day at 1 s (86,400 rows) parses in tens of milliseconds. Every error names its line.
 */
import { splitQuotedCells } from "@/lib/domain/csv-cells";
import type { AssessMode, AssessQuality, AssessSample } from "./types";

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
}

/** Most rows accepted (a week at 1 s). */
export const MAX_ASSESS_ROWS = 7 * 86_400;

const TIME_UNITS: Record<string, number> = { s: 1, sec: 1, ms: 0.001, min: 60, h: 3600 };
const ISO = /^\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}(:\d{2}(\.\d+)?)?(Z|[+-]\d{2}:?\d{2})$/i;
const COLUMNS = ["t", "sp", "pv", "mv", "mode", "quality"] as const;
type Column = (typeof COLUMNS)[number];

/** A plain decimal number (sign, digits, one point, exponent): no hex, no Infinity, no blanks inside. */
function isPlainNumber(s: string): boolean {
  const n = s.length;
  let i = 0;
  let c = s.charCodeAt(0);
  if (c === 43 || c === 45) i++;
  let digits = 0;
  let point = false;
  for (; i < n; i++) {
    c = s.charCodeAt(i);
    if (c >= 48 && c <= 57) digits++;
    else if (c === 46 && !point) point = true;
    else break;
  }
  if (digits === 0) return false;
  if (i === n) return true;
  if (c !== 101 && c !== 69) return false;
  i++;
  c = s.charCodeAt(i);
  if (c === 43 || c === 45) i++;
  const start = i;
  for (; i < n; i++) {
    c = s.charCodeAt(i);
    if (c < 48 || c > 57) return false;
  }
  return i > start;
}

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

function parseMode(raw: string): AssessMode | null {
  const m = raw.toLowerCase();
  if (m === "auto" || m === "aut") return "auto";
  if (m === "manual" || m === "man") return "manual";
  if (m === "cascade" || m === "cas") return "cascade";
  return null;
}

function parseQuality(raw: string): AssessQuality | null {
  const q = raw.toLowerCase();
  if (q === "good" || q === "bad" || q === "uncertain") return q;
  if (isPlainNumber(q)) {
    const code = Number(q);
    return code >= 192 ? "good" : code >= 64 ? "uncertain" : "bad";
  }
  return null;
}

/**
 * Parses a historian export. Throws AssessCsvError naming the line (1-based, comments counted)
 * and the column of the first problem.
 */
export function parseAssessCsv(text: string): ParsedAssessCsv {
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  let pos = 0;
  let lineNo = 0;
  const nextLine = (): string | null => {
    if (pos >= text.length) return null;
    let end = text.indexOf("\n", pos);
    if (end < 0) end = text.length;
    let line = text.slice(pos, end);
    if (line.endsWith("\r")) line = line.slice(0, -1);
    pos = end + 1;
    lineNo++;
    return line;
  };

  let headerLine: string | null = null;
  for (let l = nextLine(); l !== null; l = nextLine()) {
    const s = l.trim();
    if (s === "" || s.startsWith("#")) continue;
    headerLine = l;
    break;
  }
  if (headerLine === null) throw new AssessCsvError("The file is empty: expected a header line t,sp,pv,mv[,mode].", Math.max(1, lineNo));
  const headerLineNo = lineNo;
  const sep = headerLine.includes(",") ? "," : headerLine.includes(";") ? ";" : headerLine.includes("\t") ? "\t" : ",";
  const header = splitCells(headerLine, sep).map(headerName);
  const index: Partial<Record<Column, number>> = {};
  let tScale = 1;
  header.forEach((h, i) => {
    if (!(COLUMNS as readonly string[]).includes(h.name)) return;
    const c = h.name as Column;
    if (index[c] !== undefined) throw new AssessCsvError(`Line ${headerLineNo}: the column "${c}" appears twice (columns ${index[c]! + 1} and ${i + 1}).`, headerLineNo, c);
    index[c] = i;
    if (c === "t" && h.unit) {
      const s = TIME_UNITS[h.unit];
      if (s === undefined) throw new AssessCsvError(`Line ${headerLineNo}: time unit "${h.unit}" is not one of s, ms, min, h.`, headerLineNo, "t");
      tScale = s;
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
  const needed = Math.max(it, isp, ipv, imv, imode ?? 0, iq ?? 0) + 1;

  const samples: AssessSample[] = [];
  let timeKind: "seconds" | "iso" | null = null;
  let startTime: string | null = null;
  let prevT = -Infinity;

  const value = (cells: string[], i: number, name: Column, bad: boolean): number => {
    const raw = cells[i]!;
    if (raw === "" || raw.toLowerCase() === "nan") {
      if (bad) return NaN;
      throw new AssessCsvError(`Line ${lineNo}, column ${i + 1} (${name}): the cell is empty (allowed only on a row of bad quality).`, lineNo, name);
    }
    const v = Number(raw);
    if (!Number.isFinite(v) || !isPlainNumber(raw)) {
      const hint = /^[+-]?\d+,\d+$/.test(raw) ? " Use a point as the decimal separator." : "";
      throw new AssessCsvError(`Line ${lineNo}, column ${i + 1} (${name}): "${raw.slice(0, 40)}" is not a number.${hint}`, lineNo, name);
    }
    return v;
  };

  for (let line = nextLine(); line !== null; line = nextLine()) {
    if (line.length === 0) continue;
    const c0 = line.charCodeAt(0);
    if (c0 === 35 /* # */ || (c0 <= 32 && line.trim() === "")) continue;
    if (samples.length >= MAX_ASSESS_ROWS) throw new AssessCsvError(`Line ${lineNo}: more than ${MAX_ASSESS_ROWS} data rows; export a shorter span or a longer period.`, lineNo);
    const cells = splitCells(line, sep);
    if (cells.length < needed) {
      throw new AssessCsvError(`Line ${lineNo}: ${cells.length} cell${cells.length === 1 ? "" : "s"}, the header has ${header.length}.`, lineNo, header[cells.length]?.name ?? null);
    }
    const rawT = cells[it]!;
    let tAbs: number;
    let kind: "seconds" | "iso";
    const tn = Number(rawT);
    if (rawT !== "" && Number.isFinite(tn) && isPlainNumber(rawT)) {
      kind = "seconds";
      tAbs = tn * tScale;
    } else {
      kind = "iso";
      const ms = ISO.test(rawT) ? Date.parse(rawT.replace(" ", "T")) : NaN;
      if (!Number.isFinite(ms)) {
        throw new AssessCsvError(`Line ${lineNo}, column ${it + 1} (t): "${rawT.slice(0, 40)}" is neither seconds nor an ISO 8601 date-time with a zone.`, lineNo, "t");
      }
      tAbs = ms / 1000;
    }
    if (timeKind === null) {
      timeKind = kind;
      if (kind === "iso") startTime = new Date(tAbs * 1000).toISOString();
    } else if (kind !== timeKind) {
      throw new AssessCsvError(`Line ${lineNo}, column ${it + 1} (t): mixes ${kind === "iso" ? "a date-time" : "seconds"} with the ${timeKind === "iso" ? "date-times" : "seconds"} above.`, lineNo, "t");
    }
    if (!(tAbs > prevT)) throw new AssessCsvError(`Line ${lineNo}, column ${it + 1} (t): time does not increase; sort the rows by time and remove duplicates.`, lineNo, "t");
    prevT = tAbs;
    let quality: AssessQuality | undefined;
    if (iq !== undefined) {
      const q = parseQuality(cells[iq]!);
      if (q === null) throw new AssessCsvError(`Line ${lineNo}, column ${iq + 1} (quality): "${cells[iq]!.slice(0, 20)}" is not good, bad, uncertain or an OPC quality code.`, lineNo, "quality");
      quality = q;
    }
    const bad = quality === "bad";
    const sample: AssessSample = { t: tAbs, sp: value(cells, isp, "sp", bad), pv: value(cells, ipv, "pv", bad), mv: value(cells, imv, "mv", bad) };
    if (imode !== undefined) {
      const m = parseMode(cells[imode]!);
      if (m === null) throw new AssessCsvError(`Line ${lineNo}, column ${imode + 1} (mode): "${cells[imode]!.slice(0, 20)}" is not auto, manual or cascade.`, lineNo, "mode");
      sample.mode = m;
    }
    if (quality !== undefined) sample.quality = quality;
    samples.push(sample);
  }
  if (samples.length < 2) throw new AssessCsvError(`Only ${samples.length} data row${samples.length === 1 ? "" : "s"}; an assessment needs a span of data.`, lineNo);
  return { samples, startTime, hasMode: imode !== undefined, hasQuality: iq !== undefined };
}
