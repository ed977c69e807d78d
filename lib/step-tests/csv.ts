/**
 * Reading an uploaded step-test log (CSV). The first non-comment line is the header; columns
 * `t`, `mv`, `pv` are required, `sp` and `mode` optional, in any order and any letter case; other
 * columns are ignored. A header may carry a unit in brackets, e.g. `pv [degC]`, `t [min]`:
 * time units s, ms, min and h are converted to seconds, and PV/MV units are checked against the
 * loop's. `t` is either seconds (a number, any origin) or an ISO 8601 date-time with a zone;
 * all rows use the same kind and time strictly increases. Lines starting with `#` are comments.
 *
 * Every problem is reported with its line number in the file (the header is line 1 unless
 * comments precede it) and its 1-based column number and name, so the engineer can find it.
 */
import { splitQuotedCells } from "@/lib/domain/csv-cells";
import { HttpError, ValidationError } from "@/lib/domain/errors";
import { parseIsoSeconds } from "@/lib/assessment/csv-time";

/** Largest accepted upload, bytes (5 MiB). */
export const MAX_CSV_BYTES = 5 * 1024 * 1024;
/** Fewest data rows worth identifying. */
export const MIN_ROWS = 30;
/** Most data rows (a day at 1 s is 86,400). */
export const MAX_ROWS = 200_000;

export type StepTestMode = "auto" | "manual" | "cascade";

export interface StepTestRow {
  /** Line number in the file (1-based), for messages. */
  line: number;
  /** Seconds from the first row. */
  t: number;
  mv: number;
  pv: number;
  sp: number | null;
  mode: StepTestMode | null;
}

export interface ParsedStepTest {
  rows: StepTestRow[];
  /** The first row's time as ISO 8601 when the file used date-times, else null. */
  startTime: string | null;
  timeKind: "seconds" | "iso";
  hasSp: boolean;
  hasMode: boolean;
  /** Units written in the header (null when none). */
  units: { t: string; pv: string | null; mv: string | null };
  warnings: string[];
}

/** Where a problem is: the file line and the column (both 1-based). */
export interface CsvLocation {
  row: number;
  column: number | null;
  columnName: string | null;
}

/** 422 with the location of the first problem in `details`. */
export class StepTestFormatError extends ValidationError {
  constructor(message: string, readonly location: CsvLocation) {
    super(message, location);
  }
}

/** 413: the file is larger than MAX_CSV_BYTES. */
export class StepTestTooLargeError extends HttpError {
  constructor(bytes: number) {
    super(413, `The file is ${(bytes / 1048576).toFixed(1)} MB; step-test uploads are limited to ${MAX_CSV_BYTES / 1048576} MB.`);
  }
}

export interface LoopUnits {
  /** The loop's PV engineering units, e.g. "degC". */
  pvUnits: string;
  /** The loop's MV units, usually "%". */
  mvUnits: string;
  pvLo: number;
  pvHi: number;
  mvLo: number;
  mvHi: number;
}

const TIME_UNITS: Record<string, number> = { s: 1, sec: 1, ms: 0.001, min: 60, h: 3600 };
const KNOWN = ["t", "mv", "pv", "sp", "mode"] as const;
type Known = (typeof KNOWN)[number];
const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/** Units compare without case, spaces and the degree sign (°C = degC = C). */
function normaliseUnit(u: string): string {
  return u.toLowerCase().replace(/\s+/g, "").replace(/°/g, "deg").replace(/^deg(?=[a-z])/, "");
}


function parseHeaderCell(cell: string): { name: string; unit: string | null } {
  const m = /^([^[(]*?)\s*(?:[[(]\s*([^\])]*?)\s*[\])])?$/.exec(cell);
  const name = (m?.[1] ?? cell).trim().toLowerCase();
  const unit = m?.[2] ? m[2] : null;
  return { name, unit };
}

/**
 * Parse a step-test CSV. `loop` enables the unit and range checks.
 * @throws StepTestTooLargeError (413) above MAX_CSV_BYTES; StepTestFormatError (422) naming the
 *   line and column of the first problem.
 */
export function parseStepTestCsv(input: string | Uint8Array, loop?: LoopUnits): ParsedStepTest {
  const bytes = typeof input === "string" ? Buffer.byteLength(input, "utf8") : input.byteLength;
  if (bytes > MAX_CSV_BYTES) throw new StepTestTooLargeError(bytes);
  let text = typeof input === "string" ? input : new TextDecoder("utf-8", { fatal: false }).decode(input);
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  const lines = text.split(/\r\n|\n|\r/);
  const warnings: string[] = [];

  let headerIdx = -1;
  for (let i = 0; i < lines.length; i++) {
    const l = lines[i]!.trim();
    if (l === "" || l.startsWith("#")) continue;
    headerIdx = i;
    break;
  }
  if (headerIdx < 0) throw new StepTestFormatError("The file is empty: expected a header line with the columns t, mv, pv.", { row: 1, column: null, columnName: null });
  const headerLine = lines[headerIdx]!;
  const sep = headerLine.includes(",") ? "," : headerLine.includes(";") ? ";" : headerLine.includes("\t") ? "\t" : ",";
  const header = splitQuotedCells(headerLine, sep).map(parseHeaderCell);
  const index: Partial<Record<Known, number>> = {};
  const units: Partial<Record<Known, string | null>> = {};
  header.forEach((h, i) => {
    const known = (KNOWN as readonly string[]).includes(h.name) ? (h.name as Known) : null;
    if (!known) return;
    if (index[known] !== undefined) {
      throw new StepTestFormatError(`Header: the column "${known}" appears twice (columns ${index[known]! + 1} and ${i + 1}).`, {
        row: headerIdx + 1,
        column: i + 1,
        columnName: known,
      });
    }
    index[known] = i;
    units[known] = h.unit;
  });
  const missing = (["t", "mv", "pv"] as const).filter((k) => index[k] === undefined);
  if (missing.length > 0) {
    throw new StepTestFormatError(
      `Header: missing column${missing.length > 1 ? "s" : ""} ${missing.join(", ")}. Expected t, mv, pv (and optionally sp, mode); found ${header.map((h) => `"${h.name}"`).join(", ") || "nothing"}.`,
      { row: headerIdx + 1, column: null, columnName: missing[0]! },
    );
  }

  const tUnit = units.t ? units.t.toLowerCase() : "s";
  const tScale = TIME_UNITS[tUnit];
  if (tScale === undefined) {
    throw new StepTestFormatError(`Header: time unit "${units.t}" is not one of s, ms, min, h.`, { row: headerIdx + 1, column: index.t! + 1, columnName: "t" });
  }
  if (loop) {
    for (const k of ["pv", "mv", "sp"] as const) {
      const u = units[k];
      if (!u || index[k] === undefined) continue;
      const expected = k === "mv" ? loop.mvUnits : loop.pvUnits;
      if (normaliseUnit(u) !== normaliseUnit(expected)) {
        throw new StepTestFormatError(`Header: column ${k} is in "${u}" but this loop's ${k === "mv" ? "MV" : "PV"} is in "${expected}". Convert the column or check that the file belongs to this loop.`, {
          row: headerIdx + 1,
          column: index[k]! + 1,
          columnName: k,
        });
      }
    }
  }

  const rows: StepTestRow[] = [];
  let timeKind: "seconds" | "iso" | null = null;
  let t0 = 0;
  let startTime: string | null = null;
  let prevT = -Infinity;
  const where = (line: number, k: Known): CsvLocation => ({ row: line + 1, column: index[k]! + 1, columnName: k });
  const cellOf = (cells: string[], k: Known): string | undefined => (index[k] === undefined ? undefined : cells[index[k]!]);
  const number = (cells: string[], line: number, k: Known): number => {
    const raw = cellOf(cells, k) ?? "";
    if (raw === "") throw new StepTestFormatError(`Line ${line + 1}, column ${index[k]! + 1} (${k}): the cell is empty.`, where(line, k));
    if (!NUMBER.test(raw)) {
      const hint = /^[+-]?\d+,\d+$/.test(raw) ? " Use a point as the decimal separator." : "";
      throw new StepTestFormatError(`Line ${line + 1}, column ${index[k]! + 1} (${k}): "${raw.slice(0, 40)}" is not a number.${hint}`, where(line, k));
    }
    const v = Number(raw);
    if (!Number.isFinite(v)) throw new StepTestFormatError(`Line ${line + 1}, column ${index[k]! + 1} (${k}): the value is not finite.`, where(line, k));
    return v;
  };

  for (let i = headerIdx + 1; i < lines.length; i++) {
    const line = lines[i]!;
    const trimmed = line.trim();
    if (trimmed === "" || trimmed.startsWith("#")) continue;
    if (rows.length >= MAX_ROWS) {
      throw new StepTestFormatError(`Line ${i + 1}: more than ${MAX_ROWS} data rows; split the test or average to a longer period.`, { row: i + 1, column: null, columnName: null });
    }
    const cells = splitQuotedCells(line, sep);
    const needed = Math.max(index.t!, index.mv!, index.pv!, index.sp ?? 0, index.mode ?? 0) + 1;
    if (cells.length < needed) {
      throw new StepTestFormatError(`Line ${i + 1}: ${cells.length} cell${cells.length === 1 ? "" : "s"}, the header has ${header.length}.`, {
        row: i + 1,
        column: cells.length + 1,
        columnName: header[cells.length]?.name ?? null,
      });
    }
    // Time: seconds or ISO 8601, the same kind on every row.
    const rawT = cellOf(cells, "t")!;
    let tAbs: number;
    const kind: "seconds" | "iso" = NUMBER.test(rawT) ? "seconds" : "iso";
    if (kind === "iso") {
      // the offline command's field-checked reader: 30 February is refused, not rolled into March
      const sec = parseIsoSeconds(rawT);
      if (typeof sec === "string") {
        throw new StepTestFormatError(
          `Line ${i + 1}, column ${index.t! + 1} (t): "${rawT.slice(0, 40)}" ${sec === "is neither seconds nor an ISO 8601 date-time with a zone" ? "is neither a number of seconds nor an ISO 8601 date-time with a time zone" : sec}.`,
          where(i, "t"),
        );
      }
      tAbs = sec;
    } else tAbs = Number(rawT) * tScale;
    if (timeKind === null) {
      timeKind = kind;
      t0 = tAbs;
      if (kind === "iso") startTime = new Date(tAbs * 1000).toISOString();
    } else if (kind !== timeKind) {
      throw new StepTestFormatError(`Line ${i + 1}, column ${index.t! + 1} (t): mixes ${kind === "iso" ? "a date-time" : "seconds"} with the ${timeKind === "iso" ? "date-times" : "seconds"} of the rows above.`, where(i, "t"));
    }
    if (!(tAbs > prevT)) {
      throw new StepTestFormatError(`Line ${i + 1}, column ${index.t! + 1} (t): time does not increase (${rawT} after the previous row's). Sort the rows by time and remove duplicates.`, where(i, "t"));
    }
    prevT = tAbs;
    const mv = number(cells, i, "mv");
    const pv = number(cells, i, "pv");
    const sp = index.sp === undefined ? null : number(cells, i, "sp");
    let mode: StepTestMode | null = null;
    if (index.mode !== undefined) {
      const raw = (cellOf(cells, "mode") ?? "").toLowerCase();
      const m = raw === "man" ? "manual" : raw === "cas" ? "cascade" : raw;
      if (m !== "auto" && m !== "manual" && m !== "cascade") {
        throw new StepTestFormatError(`Line ${i + 1}, column ${index.mode + 1} (mode): "${raw.slice(0, 20)}" is not auto, manual or cascade.`, where(i, "mode"));
      }
      mode = m;
    }
    if (loop) checkRange(loop, i, index, { pv, mv, sp });
    rows.push({ line: i + 1, t: tAbs - t0, mv, pv, sp, mode });
  }
  if (rows.length < MIN_ROWS) {
    throw new StepTestFormatError(`Only ${rows.length} data row${rows.length === 1 ? "" : "s"}; a step test needs at least ${MIN_ROWS}.`, { row: lines.length, column: null, columnName: null });
  }
  if (loop) {
    const outside = rows.filter((r) => r.pv < loop.pvLo || r.pv > loop.pvHi).length;
    if (outside > 0) warnings.push(`${outside} PV value${outside === 1 ? " lies" : "s lie"} outside the loop's range ${loop.pvLo}–${loop.pvHi} ${loop.pvUnits}.`);
  }
  return {
    rows,
    startTime,
    timeKind: timeKind ?? "seconds",
    hasSp: index.sp !== undefined,
    hasMode: index.mode !== undefined,
    units: { t: "s", pv: units.pv ?? null, mv: units.mv ?? null },
    warnings,
  };
}

/**
 * A value more than a whole span outside the loop's range is read as a unit mistake (e.g. a
 * temperature in kelvin for a loop in degC, or an MV in 0-1 for 0-100 %): common practice.
 */
function checkRange(loop: LoopUnits, line: number, index: Partial<Record<Known, number>>, v: { pv: number; mv: number; sp: number | null }): void {
  const pvSpan = loop.pvHi - loop.pvLo;
  const mvSpan = loop.mvHi - loop.mvLo;
  const bad = (x: number, lo: number, hi: number, span: number) => x < lo - span || x > hi + span;
  const fail = (k: "pv" | "mv" | "sp", x: number, lo: number, hi: number, u: string) => {
    throw new StepTestFormatError(
      `Line ${line + 1}, column ${index[k]! + 1} (${k}): ${x} is far outside the loop's ${k === "mv" ? "MV" : "PV"} range ${lo}–${hi} ${u}; check the units.`,
      { row: line + 1, column: index[k]! + 1, columnName: k },
    );
  };
  if (bad(v.pv, loop.pvLo, loop.pvHi, pvSpan)) fail("pv", v.pv, loop.pvLo, loop.pvHi, loop.pvUnits);
  if (v.sp !== null && bad(v.sp, loop.pvLo, loop.pvHi, pvSpan)) fail("sp", v.sp, loop.pvLo, loop.pvHi, loop.pvUnits);
  if (bad(v.mv, loop.mvLo, loop.mvHi, mvSpan)) fail("mv", v.mv, loop.mvLo, loop.mvHi, loop.mvUnits);
}
