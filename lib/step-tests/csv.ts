/**
 * Reading an uploaded step-test log (CSV). Columns `t`, `mv`, `pv` are required, `sp` and `mode`
 * optional; the file's layout (header after comments or a `sep=;` line, separator, quotes, units
 * in brackets, line ends, UTF-8 or UTF-16), its time cells (seconds in a header unit, epoch
 * milliseconds, ISO 8601 with a zone) and number cells (a decimal comma with semicolons) are read
 * by the shared CSV layer (lib/csv) as in the offline assessment. What is this reader's own: all
 * rows use one time kind and time strictly increases; every value cell must hold a number (a
 * step test needs each one) and every mode cell a mode; the PV/MV units and ranges are checked
 * against the loop's; the size limits.
 *
 * Every problem is reported with its line number in the file (the header is line 1 unless
 * comments precede it) and its 1-based column number and name, so the engineer can find it.
 */
import { CsvError, CsvTable, SAMPLE_ALIASES, decodeText, lineReader, modeFault, NumberReader, parseMode, TimeColumn, withoutBom } from "@/lib/csv";
import { HttpError, ValidationError } from "@/lib/domain/errors";

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

type Known = "t" | "mv" | "pv" | "sp" | "mode";

const formatError = (e: CsvError) => new StepTestFormatError(e.message, { row: e.line, column: e.columnNo, columnName: e.column });

/** Units compare without case, spaces and the degree sign (°C = degC = C). */
function normaliseUnit(u: string): string {
  return u.toLowerCase().replace(/\s+/g, "").replace(/°/g, "deg").replace(/^deg(?=[a-z])/, "");
}


/**
 * Parse a step-test CSV. `loop` enables the unit and range checks.
 * @throws StepTestTooLargeError (413) above MAX_CSV_BYTES; StepTestFormatError (422) naming the
 *   line and column of the first problem.
 */
export function parseStepTestCsv(input: string | Uint8Array, loop?: LoopUnits): ParsedStepTest {
  const bytes = typeof input === "string" ? Buffer.byteLength(input, "utf8") : input.byteLength;
  if (bytes > MAX_CSV_BYTES) throw new StepTestTooLargeError(bytes);
  try {
    return readRows(withoutBom(typeof input === "string" ? input : decodeText(input)), loop);
  } catch (e) {
    throw e instanceof CsvError ? formatError(e) : e;
  }
}

function readRows(text: string, loop: LoopUnits | undefined): ParsedStepTest {
  const lines = lineReader(text);
  const table = new CsvTable<Known>({ required: ["t", "mv", "pv"], optional: ["sp", "mode"], expected: "t, mv, pv (sp and mode optional; also read: time or timestamp for t, setpoint for sp, op, out or co for mv)", aliases: SAMPLE_ALIASES });
  let lineNo = 0;
  let line = lines.next();
  for (; line !== null && table.header === null; line = lines.next()) table.row(line, (lineNo = lines.lineNo()));
  const header = table.end(lineNo);
  const { index } = header;
  const numbers = new NumberReader(header.sep === ";");
  const time = new TimeColumn(header.unit("t"), { line: header.line, column: index.t! }, numbers);
  if (loop) {
    for (const k of ["pv", "mv", "sp"] as const) {
      const u = header.unit(k);
      if (!u) continue;
      const expected = k === "mv" ? loop.mvUnits : loop.pvUnits;
      if (normaliseUnit(u) !== normaliseUnit(expected)) {
        throw new CsvError(`Line ${header.line}: column ${k} is in "${u}" but this loop's ${k === "mv" ? "MV" : "PV"} is in "${expected}". Convert the column or check that the file belongs to this loop.`, header.line, k, index[k]! + 1);
      }
    }
  }

  const rows: StepTestRow[] = [];
  let t0 = 0;
  let prevT = -Infinity;
  const fault = (k: Known, what: string) => new CsvError(`Line ${lineNo}, column ${index[k]! + 1} (${k}): ${what}`, lineNo, k, index[k]! + 1);
  const number = (cells: string[], k: Known): number => {
    const raw = cells[index[k]!]!;
    const v = numbers.read(raw, `line ${lineNo}, column ${index[k]! + 1}`);
    if (typeof v === "string") throw fault(k, v);
    if (Number.isNaN(v)) throw fault(k, raw === "" ? "the cell is empty." : `"${raw.slice(0, 40)}" is not a number.`);
    return v;
  };

  for (; line !== null; line = lines.next()) {
    lineNo = lines.lineNo();
    const cells = table.row(line, lineNo);
    if (cells === null) continue;
    if (rows.length >= MAX_ROWS) throw new CsvError(`Line ${lineNo}: more than ${MAX_ROWS} data rows; split the test or average to a longer period.`, lineNo);
    const rawT = cells[index.t!]!;
    const tAbs = time.read(rawT, `line ${lineNo}, column ${index.t! + 1}`);
    if (typeof tAbs === "string") throw fault("t", tAbs);
    if (rows.length === 0) t0 = tAbs;
    if (!(tAbs > prevT)) throw fault("t", `time does not increase (${rawT} after the previous row's). Sort the rows by time and remove duplicates.`);
    prevT = tAbs;
    const mv = number(cells, "mv");
    const pv = number(cells, "pv");
    const sp = index.sp === undefined ? null : number(cells, "sp");
    let mode: StepTestMode | null = null;
    if (index.mode !== undefined) {
      const raw = cells[index.mode]!;
      const m = parseMode(raw);
      if (m === null) throw fault("mode", modeFault(raw));
      if (m === undefined) throw fault("mode", `"${raw.slice(0, 20)}" holds no mode; write auto, manual or cascade on every row.`);
      mode = m;
    }
    if (loop) checkRange(loop, lineNo, index, { pv, mv, sp });
    rows.push({ line: lineNo, t: tAbs - t0, mv, pv, sp, mode });
  }
  if (rows.length < MIN_ROWS) {
    throw new CsvError(`Only ${rows.length} data row${rows.length === 1 ? "" : "s"}; a step test needs at least ${MIN_ROWS}.`, Math.max(1, lineNo));
  }
  const warnings = [...time.cautions];
  if (loop) {
    const outside = rows.filter((r) => r.pv < loop.pvLo || r.pv > loop.pvHi).length;
    if (outside > 0) warnings.push(`${outside} PV value${outside === 1 ? " lies" : "s lie"} outside the loop's range ${loop.pvLo}–${loop.pvHi} ${loop.pvUnits}.`);
  }
  return {
    rows,
    startTime: time.kind === "iso" ? time.startTime : null,
    timeKind: time.kind ?? "seconds",
    hasSp: index.sp !== undefined,
    hasMode: index.mode !== undefined,
    units: { t: "s", pv: header.unit("pv"), mv: header.unit("mv") },
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
      `Line ${line}, column ${index[k]! + 1} (${k}): ${x} is far outside the loop's ${k === "mv" ? "MV" : "PV"} range ${lo}–${hi} ${u}; check the units.`,
      { row: line, column: index[k]! + 1, columnName: k },
    );
  };
  if (bad(v.pv, loop.pvLo, loop.pvHi, pvSpan)) fail("pv", v.pv, loop.pvLo, loop.pvHi, loop.pvUnits);
  if (v.sp !== null && bad(v.sp, loop.pvLo, loop.pvHi, pvSpan)) fail("sp", v.sp, loop.pvLo, loop.pvHi, loop.pvUnits);
  if (bad(v.mv, loop.mvLo, loop.mvHi, mvSpan)) fail("mv", v.mv, loop.mvLo, loop.mvHi, loop.mvUnits);
}
