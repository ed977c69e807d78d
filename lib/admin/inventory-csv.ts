/**
 * The loop inventory sheet: one loop per row, the columns below, read and written in the same
 * format so an export imports again unchanged. This file is pure (no I/O): it turns CSV text into
 * rows of typed cells with every error tied to its line and column, and loops back into CSV.
 *
 * The file's layout is read by the product's CSV layer (lib/csv, strictly: see its table.ts):
 * comma, semicolon or tab separated (or as a `sep=;` line says), quoted cells that may span lines,
 * a header naming the columns in any order and letter case; an unknown column, a column named
 * twice, a row with fewer cells than the header or with a filled cell beyond it, and a stray quote
 * are refused. What stays here: the columns, the cells' meaning and what is done with a bad row
 * (it is reported with its line and column and left out; the caller refuses the whole sheet).
 *
 * Cells: numbers in plain decimal or exponent notation (a decimal comma only in a file separated
 * by semicolons, never mixed with points); a blank cell takes the kind's default
 * (inventory-defaults.ts); `none` means "no value" for the integral, derivative filter and
 * baseline time constant; `enabled` is yes/no (true/false, 1/0). Text cells that a spreadsheet
 * would run as a formula (starting with = + - @ or a tab/CR) are written with a leading `'`, which
 * the import removes again.
 */
import { stringify } from "csv-stringify/sync";
import { CsvError, CsvTable, NumberReader, recordReader, withoutBom } from "@/lib/csv";
import type { LoopKind } from "@/lib/domain/types";
import { INVENTORY_COLUMNS, type Column } from "./inventory-csv-columns";
import type { DefaultableField } from "./inventory-defaults";
import { MAX_INVENTORY_ROWS } from "./inventory-limits";
import type { LoopFields } from "./loop-schema";

const REQUIRED = ["tag", "site", "kind"] as const;
const OPTIONAL = INVENTORY_COLUMNS.map((c) => c.name).filter((n) => !(REQUIRED as readonly string[]).includes(n));

export interface InventoryIssue {
  /** 1-based line of the file (the header is line 1). */
  line: number;
  column: string | null;
  message: string;
}

/** One data row as read: the site and area by name, the rest typed, blanks left out. */
export interface InventoryRow {
  line: number;
  site: string;
  area: string | null;
  kind: LoopKind;
  tag: string;
  given: Partial<Pick<LoopFields, DefaultableField>>;
}

const FORMULA_START = /^[=+\-@\t\r]/;
/** Cell text as stored: one leading quote that guards a formula-like start is removed. */
export function unguardCell(s: string): string {
  return s.startsWith("'") && (FORMULA_START.test(s.slice(1)) || s.slice(1).startsWith("'")) ? s.slice(1) : s;
}
/** Cell text as written: a formula-like start (or a quote that would be read as the guard) gets a leading quote. */
export function guardCell(s: string): string {
  return FORMULA_START.test(s) || (s.startsWith("'") && unguardCell(s) !== s) ? `'${s}` : s;
}

function readCell(col: Column, s: string, numbers: NumberReader, where: string): { value?: unknown; error?: string } {
  switch (col.cell) {
    case "text":
      return { value: unguardCell(s) };
    case "enum": {
      const v = s.toLowerCase();
      return col.values!.includes(v) ? { value: v } : { error: `must be one of ${col.values!.join(", ")} (got "${s.slice(0, 40)}").` };
    }
    case "bool": {
      const v = s.toLowerCase();
      if (["yes", "true", "1"].includes(v)) return { value: true };
      if (["no", "false", "0"].includes(v)) return { value: false };
      return { error: `must be yes or no (got "${s.slice(0, 40)}").` };
    }
    case "numberOrNone":
      if (s.toLowerCase() === "none") return { value: null };
    // falls through
    case "number":
    case "int": {
      const n = numbers.read(s, where);
      if (typeof n === "string") return { error: `must be a number: ${n}` };
      // The layer reads a cell without a digit as "no number" (status text); here it is a mistake.
      if (Number.isNaN(n)) return { error: `must be a number (got "${s.slice(0, 40)}").` };
      if (col.cell === "int" && !Number.isInteger(n)) return { error: "must be a whole number." };
      return { value: n };
    }
  }
}

/** The layer's error as issues (its "Line N: " lead-in is the issue's line). */
const issuesOf = (e: CsvError): InventoryIssue[] =>
  (e.parts.length > 0 ? e.parts : [e]).map((p) => ({ line: p.line, column: p.column, message: p.message.replace(/^Line \d+: /, "") }));

/**
 * Read the sheet. Returns the rows that could be read and every issue found (a row with an issue
 * is left out of `rows`); the caller refuses the whole import while `issues` is non-empty. A fault
 * of the header, or a quote left open to the end of the file, stops the reading there.
 */
export function parseInventoryCsv(text: string): { rows: InventoryRow[]; issues: InventoryIssue[] } {
  const issues: InventoryIssue[] = [];
  const rows: InventoryRow[] = [];
  const table = new CsvTable<string>({ required: REQUIRED, optional: OPTIONAL, expected: "tag, site, kind and the other columns of an inventory export", strict: true });
  const records = recordReader(withoutBom(text));
  let numbers: NumberReader | null = null;
  let count = 0;
  try {
    for (let record = records.next(); record !== null; record = records.next()) {
      const line = records.lineNo();
      let cells: string[] | null;
      try {
        cells = table.row(record, line);
      } catch (e) {
        if (!(e instanceof CsvError) || table.header === null) throw e;
        issues.push(...issuesOf(e)); // a bad row: reported, left out, the next rows read
        continue;
      }
      const header = table.header;
      if (header !== null && numbers === null) {
        numbers = new NumberReader(header.sep === ";");
        // Units belong in their own columns; a unit after a column's name would be ignored.
        for (const [i, h] of header.cells.entries()) {
          if (h.unit !== null) issues.push({ line: header.line, column: h.name, message: `has a unit ("${h.unit}") in its name; the sheet gives units in its own columns (units, mv_units, ti_units, td_units), and the names ending in _s are in seconds. Remove it (column ${i + 1}).` });
        }
        if (issues.length) return { rows: [], issues };
      }
      if (cells === null || header === null) continue;
      if (++count > MAX_INVENTORY_ROWS) return { rows: [], issues: [{ line, column: null, message: `At most ${MAX_INVENTORY_ROWS} loops per file.` }] };
      const out: Record<string, unknown> = {};
      let bad = false;
      for (const col of INVENTORY_COLUMNS) {
        const i = header.index[col.name];
        const raw = i === undefined ? "" : cells[i]!;
        if (raw === "") {
          if ((REQUIRED as readonly string[]).includes(col.name)) {
            issues.push({ line, column: col.name, message: "is required." });
            bad = true;
          }
          continue;
        }
        const { value, error } = readCell(col, raw, numbers!, `line ${line}, ${col.name}`);
        if (error) {
          issues.push({ line, column: col.name, message: error });
          bad = true;
        } else out[col.field] = value;
      }
      if (bad) continue;
      const { site, area, kind, tag, ...given } = out as { site: string; area?: string; kind: LoopKind; tag: string } & InventoryRow["given"];
      rows.push({ line, site, area: area ?? null, kind, tag, given });
    }
    table.end(records.lineNo());
  } catch (e) {
    if (!(e instanceof CsvError)) throw e;
    return { rows: [], issues: [...issues, ...issuesOf(e)] };
  }
  return { rows, issues };
}

/** A loop as the sheet shows it. */
export type InventoryLoop = LoopFields & { site: string; area: string | null };

function writeCell(col: Column, loop: InventoryLoop): string {
  const v = (loop as unknown as Record<string, unknown>)[col.field];
  if (v === null || v === undefined) return col.cell === "numberOrNone" ? "none" : "";
  if (col.cell === "bool") return v ? "yes" : "no";
  if (typeof v === "number") return String(v);
  return col.cell === "text" ? guardCell(String(v)) : String(v);
}

/** The inventory as CSV in the import format (header plus one row per loop, CRLF line ends). */
export function formatInventoryCsv(loops: readonly InventoryLoop[]): string {
  const header = INVENTORY_COLUMNS.map((c) => c.name);
  const body = loops.map((l) => INVENTORY_COLUMNS.map((c) => writeCell(c, l)));
  return stringify([header, ...body], { record_delimiter: "windows", quoted_match: /^\s|\s$/ });
}
