/**
 * The loop inventory sheet: one loop per row, the columns below, read and written in the same
 * format so an export imports again unchanged. This file is pure (no I/O): it turns CSV text into
 * rows of typed cells with every error tied to its line and column, and loops back into CSV.
 *
 * Cells: numbers in plain decimal or exponent notation; a blank cell takes the kind's default
 * (inventory-defaults.ts); `none` means "no value" for the integral, derivative filter and
 * baseline time constant; `enabled` is yes/no (true/false, 1/0). Text cells that a spreadsheet
 * would run as a formula (starting with = + - @ or a tab/CR) are written with a leading `'`, which
 * the import removes again.
 */
import { parse } from "csv-parse/sync";
import { stringify } from "csv-stringify/sync";
import type { LoopKind } from "@/lib/domain/types";
import { INVENTORY_COLUMNS, type Column } from "./inventory-csv-columns";
import type { DefaultableField } from "./inventory-defaults";
import { MAX_INVENTORY_ROWS } from "./inventory-limits";
import type { LoopFields } from "./loop-schema";

const REQUIRED = new Set(["tag", "site", "kind"]);

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

function readCell(col: Column, raw: string): { value?: unknown; error?: string } {
  const s = raw.trim();
  switch (col.cell) {
    case "text":
      return { value: unguardCell(raw.trim()) };
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
      // Number("") is 0 and Number("0x10") is 16: accept only decimal notation.
      if (!/^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(s)) return { error: `must be a number (got "${s.slice(0, 40)}").` };
      const n = Number(s);
      if (!Number.isFinite(n)) return { error: "must be a finite number." };
      if (col.cell === "int" && !Number.isInteger(n)) return { error: "must be a whole number." };
      return { value: n };
    }
  }
}

/**
 * The line on which each record starts, from the byte offsets where the records end (csv-parse's
 * own line count counts a CRLF inside a quoted cell twice). Empty lines between records are skipped
 * the way the parser skips them.
 */
function recordStartLines(buf: Buffer, ends: number[]): number[] {
  const out: number[] = [];
  let line = 1;
  let pos = 0;
  const advance = (to: number) => {
    for (; pos < to && pos < buf.length; pos++) {
      const c = buf[pos];
      if (c === 0x0a || (c === 0x0d && buf[pos + 1] !== 0x0a)) line++;
    }
  };
  for (const end of ends) {
    while (pos < buf.length && (buf[pos] === 0x0a || buf[pos] === 0x0d)) advance(pos + 1);
    out.push(line);
    advance(end);
  }
  return out;
}

/**
 * Read the sheet. Returns the rows that could be read and every issue found (a row with an issue
 * is left out of `rows`); the caller refuses the whole import while `issues` is non-empty.
 */
export function parseInventoryCsv(text: string): { rows: InventoryRow[]; issues: InventoryIssue[] } {
  const issues: InventoryIssue[] = [];
  let records: { record: string[]; info: { bytes: number } }[];
  const clean = text.replace(/^\uFEFF/, "");
  try {
    records = parse(clean, { info: true, relax_column_count: true, skip_empty_lines: true, max_record_size: 64 * 1024 }) as unknown as typeof records;
  } catch (e) {
    const line = Number((e as { lines?: number }).lines ?? 1);
    return { rows: [], issues: [{ line, column: null, message: `The file is not readable CSV: ${(e as Error).message}` }] };
  }
  const header = records[0];
  if (!header) return { rows: [], issues: [{ line: 1, column: null, message: "The file is empty: the first line must name the columns." }] };
  const names = header.record.map((h) => h.trim().toLowerCase());
  const index = new Map<string, number>();
  names.forEach((n, i) => {
    if (!INVENTORY_COLUMNS.some((c) => c.name === n)) issues.push({ line: 1, column: n || `#${i + 1}`, message: "unknown column." });
    else if (index.has(n)) issues.push({ line: 1, column: n, message: "column named twice." });
    else index.set(n, i);
  });
  for (const r of REQUIRED) if (!index.has(r)) issues.push({ line: 1, column: r, message: "required column is missing." });
  if (issues.length) return { rows: [], issues };
  if (records.length - 1 > MAX_INVENTORY_ROWS) return { rows: [], issues: [{ line: 1, column: null, message: `At most ${MAX_INVENTORY_ROWS} loops per file.` }] };

  const rows: InventoryRow[] = [];
  const lineOf = recordStartLines(Buffer.from(clean, "utf8"), records.map((r) => r.info.bytes));
  for (const [n, { record }] of records.entries()) {
    if (n === 0) continue;
    const line = lineOf[n]!;
    if (record.length !== names.length) {
      issues.push({ line, column: null, message: `has ${record.length} cells, the header has ${names.length}.` });
      continue;
    }
    const out: Record<string, unknown> = {};
    let bad = false;
    for (const col of INVENTORY_COLUMNS) {
      const i = index.get(col.name);
      const raw = i === undefined ? "" : (record[i] ?? "");
      if (raw.trim() === "") {
        if (REQUIRED.has(col.name)) {
          issues.push({ line, column: col.name, message: "is required." });
          bad = true;
        }
        continue;
      }
      const { value, error } = readCell(col, raw);
      if (error) {
        issues.push({ line, column: col.name, message: error });
        bad = true;
      } else out[col.field] = value;
    }
    if (bad) continue;
    const { site, area, kind, tag, ...given } = out as { site: string; area?: string; kind: LoopKind; tag: string } & InventoryRow["given"];
    rows.push({ line, site, area: area ?? null, kind, tag, given });
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
