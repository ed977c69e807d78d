/**
 * A historian export of one loop, read as a stream: header `t,sp,pv,mv` with optional `mode` and
 * `quality` columns, one sample per line. The file's layout (separator, quotes, units in
 * brackets, comments, `sep=;`, line ends, UTF-8 or UTF-16), its time cells (epoch seconds in a
 * header unit, epoch milliseconds, ISO 8601 with a zone), number cells (a decimal comma with
 * semicolons) and mode and quality words are read by the shared CSV layer (lib/csv), as in the
 * offline assessment. What is this reader's own: a missing `mode` column means auto; times are
 * since 1970 and not negative; each record is judged alone with the same rules as live telemetry
 * (lib/domain/telemetry.ts `validateSample`), so a cell without a number is a rejection, not a
 * gap; what cannot be a sample is returned as a rejection with its line, never thrown; a line is
 * at most MAX_LINE_CHARS long. The file is never held whole.
 */
import { Readable } from "node:stream";
import { CsvError, CsvTable, LineSplitter, SAMPLE_ALIASES, modeFault, NumberReader, parseMode, parseQuality, TextSniffer, TimeColumn, TOO_LONG, type TableHeader } from "@/lib/csv";
import { validateSample } from "@/lib/domain/telemetry";
import type { SampleDto } from "@/lib/domain/types";

import {
  SAMPLE_REJECT_REASONS,
  type ByteSource,
  type SampleRejectReason,
} from "@/lib/domain/backfill";
export { SAMPLE_REJECT_REASONS, type ByteSource, type SampleRejectReason };

export type SampleRecord =
  | { line: number; sample: SampleDto }
  | { line: number; reject: SampleRejectReason; detail: string };

/** Longest line read (characters); a longer one is rejected and the lines after it are read. */
export const MAX_LINE_CHARS = 4096;

type Column = "t" | "sp" | "pv" | "mv" | "mode" | "quality";
const SPEC = { required: ["t", "sp", "pv", "mv"], optional: ["mode", "quality"], expected: "t, sp, pv, mv (mode, quality optional; also read: time or timestamp for t, setpoint for sp, op, out or co for mv)", aliases: SAMPLE_ALIASES } as const;

/**
 * Bytes read at a time. The replay takes about 0.1 ms per record: records made from a whole
 * 64 KiB chunk at once (as csv-parse did) stayed alive across several young-generation
 * collections, were promoted, and old space filled with them as garbage (heap flat after a full
 * collection, RSS +180 MiB on an 8 MB file in bench:backfill). Slices of 4 KiB, read only when
 * the records of the slice before have been taken, keep about a hundred records in flight.
 */
const SLICE_BYTES = 4096;

/** The source's bytes in slices of at most SLICE_BYTES (views, no copies of byte chunks). */
async function* sliceBytes(source: ByteSource): AsyncGenerator<Buffer> {
  const chunks: AsyncIterable<Uint8Array | string> =
    typeof (source as ReadableStream).getReader === "function"
      ? Readable.fromWeb(source as import("node:stream/web").ReadableStream<Uint8Array>)
      : (source as AsyncIterable<Uint8Array | string>);
  for await (const c of chunks) {
    const b = typeof c === "string" ? Buffer.from(c) : Buffer.from(c.buffer, c.byteOffset, c.byteLength);
    for (let i = 0; i < b.length; i += SLICE_BYTES) yield b.subarray(i, i + SLICE_BYTES);
  }
}

/** Reads the data lines of one file against its header: a record per line. */
class SampleRows {
  private readonly numbers: NumberReader;
  private readonly time: TimeColumn;
  private cautioned = 0;

  constructor(private readonly header: TableHeader<Column>) {
    this.numbers = new NumberReader(header.sep === ";");
    this.time = new TimeColumn(header.unit("t"), { line: header.line, column: header.index.t! }, this.numbers);
  }

  /** Epoch ms of the time cell, or a rejection. */
  private t(raw: string, line: number): number | SampleRecord {
    const i = this.header.index.t!;
    const sec = this.time.read(raw, `line ${line}, column ${i + 1}`);
    if (typeof sec === "string") return { line, reject: "bad-time", detail: `column ${i + 1} (t): ${sec}` };
    if (sec < 0) return { line, reject: "bad-time", detail: `column ${i + 1} (t): "${raw.slice(0, 40)}" is before 1970; times are since 1970.` };
    return Math.round(sec * 1000);
  }

  /** A value cell: its number, or a rejection naming the cell. */
  private value(cells: string[], c: "sp" | "pv" | "mv", line: number): number | SampleRecord {
    const i = this.header.index[c]!;
    const raw = cells[i]!;
    const v = this.numbers.read(raw, `line ${line}, column ${i + 1}`);
    const at = `column ${i + 1} (${c})`;
    if (typeof v === "string") return { line, reject: / out of range\.$/.test(v) ? "non-finite" : "bad-shape", detail: `${at}: ${v}` };
    if (Number.isNaN(v)) return raw === "" ? { line, reject: "missing-value", detail: `${at}: the cell is empty.` } : { line, reject: "non-finite", detail: `${at}: "${raw.slice(0, 40)}" holds no number.` };
    return v;
  }

  record(cells: string[], written: number, line: number): SampleRecord {
    const { index, cells: names } = this.header;
    const t = this.t(cells[index.t!]!, line);
    if (typeof t !== "number") return t;
    const values: number[] = [];
    for (const c of ["sp", "pv", "mv"] as const) {
      const v = this.value(cells, c, line);
      if (typeof v !== "number") return v;
      values.push(v);
    }
    let mode: SampleDto["mode"] = "auto";
    if (index.mode !== undefined) {
      const raw = cells[index.mode]!;
      const m = parseMode(raw);
      const at = `column ${index.mode + 1} (mode)`;
      if (m === null) return { line, reject: "bad-shape", detail: `${at}: ${modeFault(raw)}` };
      if (m === undefined) {
        return index.mode >= written
          ? { line, reject: "bad-row", detail: `${written} cells, the header has ${names.length}: no mode.` }
          : { line, reject: "bad-shape", detail: `${at}: "${raw.slice(0, 20)}" holds no mode; the history needs auto, manual or cascade.` };
      }
      mode = m;
    }
    let quality: string | undefined;
    if (index.quality !== undefined) {
      const q = parseQuality(cells[index.quality]!);
      if (q === null) return { line, reject: "bad-shape", detail: `column ${index.quality + 1} (quality): "${cells[index.quality]!.slice(0, 20)}" is not good, bad, uncertain or an OPC quality code.` };
      quality = q;
    }
    const v = validateSample({ t, sp: values[0], pv: values[1], mv: values[2], mode, ...(quality === undefined ? {} : { quality }) });
    if (!v.ok) return { line, reject: v.reason, detail: "a value, the mode or the quality is not valid." };
    return { line, sample: v.sample };
  }

  /** Cautions of the time column not yet handed out. */
  newCautions(): string[] {
    const out = this.time.cautions.slice(this.cautioned);
    this.cautioned = this.time.cautions.length;
    return out;
  }
}

/**
 * Records of the file in order. `onBytes` is called with the count of bytes consumed so far
 * (for progress), `onCaution` with what was read with an assumption (the unit of large times).
 * The first yielded value is a `bad-header` rejection when the header is missing or lacks a
 * required column; nothing follows it then.
 */
export async function* readSampleCsv(
  source: ByteSource,
  onBytes?: (n: number) => void,
  onCaution?: (line: number, text: string) => void,
): AsyncGenerator<SampleRecord> {
  const text = new TextSniffer();
  const lines = new LineSplitter(MAX_LINE_CHARS);
  const table = new CsvTable<Column>(SPEC);
  let rows: SampleRows | null = null;
  let lineNo = 0;
  let bytes = 0;
  const refused = (e: unknown, header: boolean): SampleRecord => {
    if (!(e instanceof CsvError)) throw e;
    // a bad header becomes the job's message: it keeps its "Line N: "
    return header ? { line: e.line, reject: "bad-header", detail: e.message } : { line: e.line, reject: "bad-row", detail: e.message.replace(/^Line \d+: /, "") };
  };
  /** The record of one line, null for a line without data. */
  const read = (line: string | typeof TOO_LONG): SampleRecord | null => {
    lineNo++;
    if (line === TOO_LONG) return { line: lineNo, reject: rows ? "bad-row" : "bad-header", detail: `the line is longer than ${MAX_LINE_CHARS} characters.` };
    let cells: string[] | null;
    try {
      cells = table.row(line, lineNo);
      if (!rows && table.header) rows = new SampleRows(table.header);
    } catch (e) {
      return refused(e, !rows);
    }
    if (cells === null || !rows) return null;
    const rec = rows.record(cells, table.written, lineNo);
    for (const c of rows.newCautions()) onCaution?.(lineNo, c);
    return rec;
  };
  const ends = (rec: SampleRecord) => "reject" in rec && rec.reject === "bad-header";
  for await (const slice of sliceBytes(source)) {
    bytes += slice.byteLength;
    onBytes?.(bytes);
    for (const line of lines.push(text.push(slice))) {
      const rec = read(line);
      if (rec === null) continue;
      yield rec;
      if (ends(rec)) return;
    }
  }
  for (const line of [...lines.push(text.end()), ...lines.end()]) {
    const rec = read(line);
    if (rec === null) continue;
    yield rec;
    if (ends(rec)) return;
  }
  if (!rows) {
    try {
      table.end(lineNo);
    } catch (e) {
      yield refused(e, true);
    }
  }
}
