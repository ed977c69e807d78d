/**
 * The layout of a CSV export: the header line found after comment (`#`) and blank lines, or after
 * a spreadsheet's `sep=;` line; the separator (comma, semicolon or tab: the one that finds most of
 * the required columns, then the most cells); columns looked up by name in any order and letter
 * case, with blanks or quotes around them and a unit in brackets or parentheses (`pv [degC]`,
 * `t (min)`); other columns ignored. Then each data line's cells, with the checks every reader
 * shares: a line of separators only holds nothing, a line without its trailing optional cells has
 * them empty, a line too short (or longer with a non-empty extra cell: a separator inside an
 * unquoted cell would shift the columns) is refused naming the line.
 *
 * Fed one line at a time, so a whole text (lineReader) and a stream (LineSplitter) read alike.
 *
 * `strict` is for a sheet kept by hand and imported as configuration (the loop inventory), where a
 * silently skipped or shifted cell would change what is saved: a column the reader does not know
 * is refused, a data line must have every column (only empty cells may follow the last), quotes
 * follow RFC 4180 to the letter (splitStrictCells), `#` starts a data line like any other text,
 * and a record may span lines (feed it records.ts's records).
 */
import { sepName, splitCells, splitStrictCells } from "./cells";
import { CsvError } from "./error";

export interface TableSpec<C extends string> {
  required: readonly C[];
  optional: readonly C[];
  /** The columns a file must have, for messages: "t,sp,pv,mv (mode and quality optional)". */
  expected: string;
  /** See above; false when not given. */
  strict?: boolean;
  /**
   * Other names a column may carry (lower case), read only when no cell has the column's own
   * name: `time` for `t`, `op` for `mv`. A column found under two of them is refused as twice.
   */
  aliases?: Partial<Record<C, readonly string[]>>;
}

/**
 * The names historians and control systems commonly write for the sample columns (common practice
 * of the trade: OP, OUT and CO for the controller output, a written-out set point or time).
 */
export const SAMPLE_ALIASES = {
  t: ["time", "timestamp", "datetime", "date time"],
  sp: ["setpoint", "set point"],
  mv: ["op", "out", "output", "co"],
} as const;

export interface HeaderCell {
  /** Name without its unit, trimmed, lower case. */
  name: string;
  /** Unit as written (trimmed), null when none. */
  unit: string | null;
}

export interface TableHeader<C extends string> {
  line: number;
  sep: string;
  cells: HeaderCell[];
  /** 0-based column of each named column the file has. */
  index: Partial<Record<C, number>>;
  /** The unit written after a column's name, null when none. */
  unit: (c: C) => string | null;
}

export function headerCell(cell: string): HeaderCell {
  const m = /^([^[(]*?)\s*(?:[[(]\s*([^\])]*?)\s*[\])])?$/.exec(cell);
  return { name: (m?.[1] ?? cell).trim().toLowerCase(), unit: m?.[2] ? m[2].trim() : null };
}

const SEPARATORS = [",", ";", "\t"];

/** The separator that finds most of `required` in the header (then the most cells). */
export function chooseSeparator(headerLine: string, required: readonly string[]): string {
  let best = ",";
  let bestScore = -1;
  for (const sep of SEPARATORS) {
    const names = splitCells(headerLine, sep).map((c) => headerCell(c).name);
    const score = 100 * required.filter((c) => names.includes(c)).length + names.length;
    if (score > bestScore) {
      best = sep;
      bestScore = score;
    }
  }
  return best;
}

const isBlank = (l: string) => l.trim() === "" || l.trim().startsWith("#");

export class CsvTable<C extends string> {
  header: TableHeader<C> | null = null;
  /** Cells the last data line had before its empty optional cells were added. */
  written = 0;
  private sepGiven: string | null = null;
  private sepLine = 0;
  private requiredLast = 0;
  private needed = 0;

  constructor(private readonly spec: TableSpec<C>) {}

  /**
   * One line of the file (`lineNo` 1-based, every line counted). Returns a data line's cells,
   * null for a line that holds none (blank, comment, `sep=`, the header, separators only).
   * Throws CsvError naming the line for a bad header or a data line of the wrong length.
   */
  row(line: string, lineNo: number): string[] | null {
    if (this.header === null) {
      if (isBlank(line)) return null;
      const sep = /^"?sep=(.)"?\s*$/i.exec(line);
      if (sep && this.sepGiven === null) {
        this.sepGiven = sep[1]!;
        this.sepLine = lineNo;
        return null;
      }
      this.readHeader(line, lineNo);
      return null;
    }
    if (line.length === 0) return null;
    const c0 = line.charCodeAt(0);
    const strict = this.spec.strict === true;
    if ((c0 === 35 /* # */ && !strict) || (c0 <= 32 && line.trim() === "")) return null;
    const { sep, cells: names } = this.header;
    const cells = strict ? splitStrictCells(line, sep, lineNo) : splitCells(line, sep);
    // A row of separators only (a spreadsheet's formatted but empty rows) holds nothing.
    if (cells.every((c) => c === "")) return null;
    this.written = cells.length;
    // Tools that drop trailing empty cells: the optional columns are then empty.
    if (!strict && cells.length < this.needed && cells.length > this.requiredLast) while (cells.length < this.needed) cells.push("");
    if (cells.length < (strict ? names.length : this.needed)) {
      const other = SEPARATORS.find((c) => c !== sep && line.includes(c));
      const hint = other ? ` The header is separated by "${sepName(sep)}", this line has "${sepName(other)}".` : "";
      throw new CsvError(`Line ${lineNo}: ${cells.length} cell${cells.length === 1 ? "" : "s"}, the header has ${names.length}.${hint}`, lineNo, names[cells.length]?.name ?? null, cells.length + 1);
    }
    for (let i = names.length; i < cells.length; i++) {
      if (cells[i] === "") continue;
      throw new CsvError(
        `Line ${lineNo}: ${cells.length} cells, the header has ${names.length}; a cell that holds the separator "${sepName(sep)}" without quotes (a decimal comma, a note) would shift the columns.`,
        lineNo,
        null,
        i + 1,
      );
    }
    return cells;
  }

  /** The header, or a CsvError when the file ended before it. */
  end(lineNo: number): TableHeader<C> {
    if (this.header) return this.header;
    if (this.sepGiven !== null) throw new CsvError(`The file has no header line ${this.spec.expected} after its sep= line.`, Math.max(1, this.sepLine));
    throw new CsvError(`The file is empty: expected a header line ${this.spec.expected}.`, Math.max(1, lineNo));
  }

  private readHeader(line: string, lineNo: number): void {
    const { required, optional, expected, strict } = this.spec;
    const aliases = this.spec.aliases ?? {};
    const sep = this.sepGiven ?? chooseSeparator(line, [...required, ...required.flatMap((c) => (aliases as Record<string, readonly string[]>)[c] ?? [])]);
    const cells = (strict ? splitStrictCells(line, sep, lineNo) : splitCells(line, sep)).map(headerCell);
    const index: Partial<Record<C, number>> = {};
    const known = [...required, ...optional] as readonly string[];
    const faults: CsvError[] = [];
    cells.forEach((h, i) => {
      if (!known.includes(h.name)) {
        if (strict) faults.push(new CsvError(`Line ${lineNo}: ${h.name ? `the column "${h.name}" is not one this file takes` : `column ${i + 1} has no name`}; expected ${expected}.`, lineNo, h.name || null, i + 1));
        return;
      }
      const c = h.name as C;
      if (index[c] === undefined) index[c] = i;
      else faults.push(new CsvError(`Line ${lineNo}: the column "${c}" appears twice (columns ${index[c]! + 1} and ${i + 1}).`, lineNo, c, i + 1));
    });
    // Other names, only for a column its own name did not find (a cell already taken stays its own).
    const taken = new Set(Object.values(index) as number[]);
    for (const c of [...required, ...optional]) {
      const names = (aliases as Partial<Record<string, readonly string[]>>)[c];
      if (index[c] !== undefined || !names) continue;
      cells.forEach((h, i) => {
        if (taken.has(i) || !names.includes(h.name)) return;
        if (index[c] === undefined) index[c] = i;
        else faults.push(new CsvError(`Line ${lineNo}: the column "${c}" appears twice ("${cells[index[c]!]!.name}" in column ${index[c]! + 1} and "${h.name}" in column ${i + 1}).`, lineNo, c, i + 1));
      });
    }
    const missing = required.filter((c) => index[c] === undefined);
    if (missing.length > 0) {
      faults.push(new CsvError(`Line ${lineNo}: the header lacks ${missing.join(", ")}; expected ${expected}, found ${cells.map((h) => `"${h.name}"`).join(", ")}.`, lineNo, missing[0]!));
    }
    if (faults.length === 1) throw faults[0]!;
    if (faults.length > 1) {
      const [first] = faults;
      throw new CsvError(faults.map((f, k) => (k === 0 ? f.message : f.message.replace(/^Line \d+: /, ""))).join(" "), lineNo, first!.column, first!.columnNo, faults);
    }
    this.requiredLast = Math.max(...required.map((c) => index[c]!));
    this.needed = Math.max(this.requiredLast, ...optional.map((c) => index[c] ?? 0)) + 1;
    this.header = { line: lineNo, sep, cells, index, unit: (c) => (index[c] === undefined ? null : cells[index[c]]!.unit) };
  }
}
