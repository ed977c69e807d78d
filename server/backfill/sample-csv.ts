/**
 * A historian export of one loop, read as a stream: header `t,sp,pv,mv` with optional `mode` and
 * `quality` columns (any order, any case), one sample per line. `t` is ISO 8601 with a zone
 * (2026-11-02T08:00:00Z, +01:00) or epoch seconds (fractions allowed), as in the offline
 * assessment's files; SP and PV in engineering units, MV in its own units. A missing `mode`
 * column means auto. Each record is judged alone with the same rules as live telemetry
 * (lib/telemetry.ts `validateSample`); what cannot be a sample is returned as a rejection with
 * its line, never thrown. The file is never held whole: records come one by one from csv-parse.
 */
import { Readable } from "node:stream";
import { parse } from "csv-parse";
import { isPlainNumber, parseIsoSeconds } from "@/lib/assessment/csv-time";
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

const DECIMAL = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/**
 * Epoch ms of a time cell, or what is wrong with it. ISO 8601 is read by the offline command's
 * own field-checked reader (lib/assessment/csv-time.ts), so an export reads the same in both and
 * 30 February is refused rather than rolled over into March by Date.parse.
 */
export function parseSampleTime(cell: string): number | string {
  const s = cell.trim();
  if (isPlainNumber(s)) {
    const sec = Number(s);
    return Number.isFinite(sec) && sec >= 0 ? Math.round(sec * 1000) : "is not a time: epoch seconds are 0 or more";
  }
  const v = parseIsoSeconds(s);
  return typeof v === "number" ? Math.round(v * 1000) : v;
}

function numberCell(cell: string): number | string | null {
  const s = cell.trim();
  if (s === "") return null;
  if (DECIMAL.test(s)) return Number(s);
  return s; // NaN, inf, text: validateSample tells non-finite from bad shape
}

/**
 * Bytes handed to the parser at a time. csv-parse turns a whole chunk into records at once, and
 * the replay takes about 0.1 ms per record: the ~2,000 records of a 64 KiB chunk stayed alive
 * across several young-generation collections, were promoted, and old space filled with them as
 * garbage (heap flat after a full collection, RSS +180 MiB on an 8 MB file in bench:backfill).
 * With 4 KiB slices the stream's backpressure keeps about a hundred records in flight.
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

/**
 * Records of the file in order. `onBytes` is called with the count of bytes consumed so far
 * (for progress). The first yielded value is a `bad-header` rejection when the header lacks a
 * required column; nothing follows it then.
 */
export async function* readSampleCsv(
  source: ByteSource,
  onBytes?: (n: number) => void,
): AsyncGenerator<SampleRecord> {
  const input = Readable.from(sliceBytes(source), { objectMode: false, highWaterMark: SLICE_BYTES });
  let bytes = 0;
  input.on("data", (c: Buffer | string) => {
    bytes += typeof c === "string" ? Buffer.byteLength(c) : c.byteLength;
    onBytes?.(bytes);
  });
  const parser = input.pipe(
    parse({
      info: true,
      relax_column_count: true,
      skip_empty_lines: true,
      trim: true,
      bom: true,
      max_record_size: 4096,
    }),
  );
  let index: Record<"t" | "sp" | "pv" | "mv" | "mode" | "quality", number> | null = null;
  let width = 0;
  try {
    for await (const { record, info } of parser as AsyncIterable<{
      record: string[];
      info: { lines: number };
    }>) {
      const line = info.lines;
      if (!index) {
        const names = record.map((h) => h.trim().toLowerCase());
        const at = (n: string) => names.indexOf(n);
        const missing = ["t", "sp", "pv", "mv"].filter((n) => at(n) < 0);
        if (missing.length) {
          yield {
            line,
            reject: "bad-header",
            detail: `The first line must name the columns t, sp, pv, mv (mode, quality optional); missing: ${missing.join(", ")}.`,
          };
          return;
        }
        index = {
          t: at("t"),
          sp: at("sp"),
          pv: at("pv"),
          mv: at("mv"),
          mode: at("mode"),
          quality: at("quality"),
        };
        width = names.length;
        continue;
      }
      if (record.length !== width) {
        yield {
          line,
          reject: "bad-row",
          detail: `${record.length} cells, the header has ${width}.`,
        };
        continue;
      }
      const t = parseSampleTime(record[index.t] ?? "");
      if (typeof t === "string") {
        yield {
          line,
          reject: "bad-time",
          detail: `"${(record[index.t] ?? "").slice(0, 40)}" ${t}.`,
        };
        continue;
      }
      const sp = numberCell(record[index.sp] ?? "");
      const pv = numberCell(record[index.pv] ?? "");
      const mv = numberCell(record[index.mv] ?? "");
      if (sp === null || pv === null || mv === null) {
        yield { line, reject: "missing-value", detail: "an empty SP, PV or MV cell." };
        continue;
      }
      const mode = index.mode >= 0 ? (record[index.mode] ?? "").toLowerCase() : "auto";
      const quality =
        index.quality >= 0 && record[index.quality] !== ""
          ? (record[index.quality] ?? "").toLowerCase()
          : undefined;
      const v = validateSample({
        t,
        sp,
        pv,
        mv,
        mode,
        ...(quality === undefined ? {} : { quality }),
      });
      if (!v.ok) {
        yield {
          line,
          reject: v.reason,
          detail:
            v.reason === "non-finite"
              ? "SP, PV or MV is not a finite number."
              : "a value, the mode or the quality is not valid.",
        };
        continue;
      }
      yield { line, sample: v.sample };
    }
    if (!index)
      yield {
        line: 1,
        reject: "bad-header",
        detail:
          "The file is empty: its first line must name the columns t, sp, pv, mv (mode, quality optional).",
      };
  } catch (e) {
    yield {
      line: Number((e as { lines?: number }).lines ?? 0),
      reject: "bad-row",
      detail: `The file is not readable CSV from here on: ${(e as Error).message}`,
    };
  } finally {
    input.destroy();
  }
}
