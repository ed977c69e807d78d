/**
 * Historian exports for the assessment: a CSV with the header `t,sp,pv,mv[,mode][,quality]`
 * (columns in any order and any letter case, blanks and quotes around names, other columns
 * ignored; a unit in brackets or parentheses after a name, e.g. `pv [degC]`, `t (min)`). The
 * separator is the one of comma, semicolon and tab that finds the columns (or a spreadsheet's
 * `sep=;` first line); a decimal comma is read only with semicolons. Lines end in LF, CRLF or CR.
 * `t` is seconds (any origin; milliseconds since 1970 when too large for seconds, with a caution)
 * or an ISO 8601 date-time with a zone (lib/csv/time.ts), one kind per file, never going back; a row
 * at the time of the row before is dropped (same values) or replaces it, with a caution. `mode`
 * is auto, manual or cascade (aut/man/cas/automatic; empty = unknown); `quality` is
 * good/bad/uncertain or an OPC quality code (>= 192 good, 64-191 uncertain, below 64 bad: common
 * practice). A value cell without a digit (empty, NaN, Bad, #N/A, I/O Timeout ...) is missing,
 * with a caution; anything else that is not a number is refused. `#` starts a comment line.
 *
 * The file's layout, cells and times are read by the shared CSV layer (lib/csv); what is this
 * reader's own is which columns it needs, the mode and quality columns, repeated times and the
 * size limit. Browser-safe (no Node APIs). One pass over the text without splitting it into an
 * array of lines, so a day at 1 s (86,400 rows) parses in tens of milliseconds. Every error names
 * its line (CsvError, exported here as AssessCsvError).
 */
import { CsvError, CsvTable, lineReader, SAMPLE_ALIASES, modeFault, NumberReader, parseMode, parseQuality, TimeColumn, withoutBom } from "@/lib/csv";
import type { AssessQuality, AssessSample } from "./types";

export { CsvError as AssessCsvError };

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

type Column = "t" | "sp" | "pv" | "mv" | "mode" | "quality";

const sameValue = (a: number, b: number) => a === b || (Number.isNaN(a) && Number.isNaN(b));
const sameSample = (a: AssessSample, b: AssessSample) =>
  sameValue(a.sp, b.sp) && sameValue(a.pv, b.pv) && sameValue(a.mv, b.mv) && a.mode === b.mode && a.quality === b.quality;

/**
 * Parses a historian export. Throws AssessCsvError naming the line (1-based, comments counted)
 * and the column of the first problem.
 */
export function parseAssessCsv(text: string): ParsedAssessCsv {
  const lines = lineReader(withoutBom(text));
  const table = new CsvTable<Column>({ required: ["t", "sp", "pv", "mv"], optional: ["mode", "quality"], expected: "t,sp,pv,mv (mode and quality optional; also read: time or timestamp for t, setpoint for sp, op, out or co for mv)", aliases: SAMPLE_ALIASES });
  let lineNo = 0;
  let line = lines.next();
  for (; line !== null && table.header === null; line = lines.next()) table.row(line, (lineNo = lines.lineNo()));
  const header = table.end(lineNo);
  const { index } = header;
  const it = index.t!;
  const isp = index.sp!;
  const ipv = index.pv!;
  const imv = index.mv!;
  const imode = index.mode;
  const iq = index.quality;

  const samples: AssessSample[] = [];
  const numbers = new NumberReader(header.sep === ";");
  const time = new TimeColumn(header.unit("t"), { line: header.line, column: it }, numbers, true);
  let prevT = -Infinity;
  let prevLine = 0;
  let modeUnknown = 0;
  let repeatsDropped = 0;
  let repeatsReplaced = 0;
  let firstReplaced = 0;

  const fault = (i: number, name: Column, what: string) => new CsvError(`Line ${lineNo}, column ${i + 1} (${name}): ${what}`, lineNo, name, i + 1);
  const value = (cells: string[], i: number, name: Column, bad: boolean): number => {
    const v = numbers.read(cells[i]!, `line ${lineNo}, column ${i + 1}`);
    if (typeof v === "string") throw fault(i, name, v);
    if (Number.isNaN(v) && !bad) numbers.noteMissing(`line ${lineNo}, column ${i + 1} ("${cells[i]!.slice(0, 20)}")`);
    return v;
  };

  for (; line !== null; line = lines.next()) {
    lineNo = lines.lineNo();
    const cells = table.row(line, lineNo);
    if (cells === null) continue;
    if (samples.length >= MAX_ASSESS_ROWS) throw new CsvError(`Line ${lineNo}: more than ${MAX_ASSESS_ROWS} data rows; export a shorter span or a longer period.`, lineNo);
    const tAbs = time.read(cells[it]!, `line ${lineNo}, column ${it + 1}`);
    if (typeof tAbs === "string") throw fault(it, "t", tAbs);
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
  if (samples.length < 2) throw new CsvError(`Line ${lineNo}: only ${samples.length} data row${samples.length === 1 ? "" : "s"} with distinct times; an assessment needs a span of data.`, lineNo);
  const cautions = [...time.cautions];
  if (numbers.missing > 0) cautions.push(`${numbers.missing} value cell${numbers.missing === 1 ? "" : "s"} held no number (first at ${numbers.firstMissing}): those samples are treated as bad quality.`);
  if (modeUnknown > 0) cautions.push(`${modeUnknown} row${modeUnknown === 1 ? "" : "s"} had no mode: read as unknown (treated as closed loop).`);
  if (repeatsDropped > 0) cautions.push(`${repeatsDropped} row${repeatsDropped === 1 ? "" : "s"} repeated the row before (same time, same values) and were dropped.`);
  if (repeatsReplaced > 0) cautions.push(`${repeatsReplaced} row${repeatsReplaced === 1 ? "" : "s"} had the time of the row before with other values (first at line ${firstReplaced}); the later row was kept, as a historian replays it.`);
  return { samples, startTime: time.startTime, hasMode: imode !== undefined, hasQuality: iq !== undefined, cautions };
}
