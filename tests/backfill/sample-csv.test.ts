/**
 * The historian CSV reader (server/backfill/sample-csv.ts) hands the parser bounded slices of
 * whatever chunks it is given, so only a few records wait for the replay at any time: records
 * that wait across young-generation collections are promoted to old space and fill it with
 * garbage (measured in bench:backfill). A chunk of 1 MB must not be read ahead of the consumer
 * in one go. The bound (64 KiB) is our own: a 4 KiB slice plus the stream buffers.
 */
import { describe, expect, it } from "vitest";
import { readSampleCsv } from "@/server/backfill/sample-csv";

function bigCsv(rows: number): string {
  const lines = ["t,sp,pv,mv,mode"];
  for (let k = 0; k < rows; k++) lines.push(`${1_790_000_000 + k},50,${(49 + (k % 7) * 0.25).toFixed(2)},40.5,auto`);
  return lines.join("\n") + "\n";
}

describe("readSampleCsv", () => {
  it("reads a large chunk in bounded slices as the records are consumed, losing none", async () => {
    const text = bigCsv(30_000); // about 1 MB in a single chunk
    const total = Buffer.byteLength(text);
    expect(total).toBeGreaterThan(900_000);
    let bytes = 0;
    let maxAhead = 0;
    let n = 0;
    let lastT = 0;
    async function* one(): AsyncGenerator<Buffer> {
      yield Buffer.from(text);
    }
    for await (const rec of readSampleCsv(one(), (b) => (bytes = b))) {
      if (!("sample" in rec)) throw new Error(`unexpected rejection on line ${rec.line}: ${rec.detail}`);
      n++;
      expect(rec.sample.t).toBeGreaterThan(lastT);
      lastT = rec.sample.t;
      // bytes consumed beyond the records handed out so far (each row is 30 bytes)
      maxAhead = Math.max(maxAhead, bytes - 16 - n * 30);
    }
    expect(n).toBe(30_000);
    expect(bytes).toBe(total);
    expect(maxAhead).toBeLessThan(64 * 1024);
  });

  it("slices text chunks and web streams the same way", async () => {
    const text = bigCsv(5_000);
    const web = new ReadableStream<Uint8Array>({
      start(c) {
        c.enqueue(new TextEncoder().encode(text));
        c.close();
      },
    });
    async function* asText(): AsyncGenerator<string> {
      yield text;
    }
    for (const source of [web, asText()]) {
      let n = 0;
      for await (const rec of readSampleCsv(source)) if ("sample" in rec) n++;
      expect(n).toBe(5_000);
    }
  });

  it("reads times as the offline command does: 30 February and a zone-less time are refused with the reason, not rolled over", async () => {
    // The expected instants are written out by hand from the cells (the file is the reference).
    const text = [
      "t,sp,pv,mv",
      "2026-03-01T00:00:00Z,50,49.5,40",
      "2026-02-30T00:00:00Z,50,49.5,40",
      "2026-03-01 01:00:00.5+01:00,50,49.5,40",
      "2026-03-01T00:00:02,50,49.5,40",
      "1772323203,50,49.5,40",
    ].join("\n") + "\n";
    async function* one(): AsyncGenerator<Buffer> {
      yield Buffer.from(text);
    }
    const got: (number | string)[] = [];
    for await (const rec of readSampleCsv(one(), () => {})) got.push("sample" in rec ? rec.sample.t : `${rec.line} ${rec.reject}: ${rec.detail}`);
    expect(got).toEqual([
      Date.UTC(2026, 2, 1, 0, 0, 0),
      '3 bad-time: column 1 (t): "2026-02-30T00:00:00Z" has no such date.',
      Date.UTC(2026, 2, 1, 0, 0, 0) + 500,
      expect.stringMatching(/^5 bad-time: .*without a zone/),
      // one kind of time per file, as in the offline command
      "6 bad-time: column 1 (t): mixes seconds with the date-times above.",
    ]);
  });

  it("reads what the shared CSV layer reads (lib/csv): units in the header and decimal commas with semicolons; a line too long is one rejected row and the lines after it are read", async () => {
    // Before lib/csv: the header "t [s];..." was refused (bad-header), and a line over 4,096
    // characters stopped csv-parse for the rest of the file.
    const text = ["t [s];sp [kPa];pv [kPa];mv [%]", "1790000000,5;325,5;325,75;41,25", `1790000001;${"9".repeat(5000)};1;1`, "1790000002;325,5;326;41", ""].join("\n");
    async function* one(): AsyncGenerator<Buffer> {
      yield Buffer.from(text);
    }
    const got: unknown[] = [];
    for await (const rec of readSampleCsv(one())) got.push("sample" in rec ? [rec.line, rec.sample.t, rec.sample.sp, rec.sample.pv, rec.sample.mv] : [rec.line, rec.reject, rec.detail]);
    expect(got).toEqual([
      [2, 1_790_000_000_500, 325.5, 325.75, 41.25],
      [3, "bad-row", "the line is longer than 4096 characters."],
      [4, 1_790_000_002_000, 325.5, 326, 41],
    ]);
  });
});
