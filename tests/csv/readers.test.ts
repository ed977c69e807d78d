/**
 * The three CSV readers (offline assessment, step-test uploads, historian backfill) read a file's
 * layout and cells through one layer (lib/csv), so an export one of them accepts the others read
 * to the same values, and a fault one of them refuses the others refuse naming the same line.
 * The values each file was written from are the reference (the file is written here from them);
 * what a reader does with a cell without a number is its own and is checked apart.
 * Before lib/csv the step-test reader refused decimal commas, `sep=;` lines, UTF-16 and
 * "automatic"/"casc" and read epoch milliseconds as seconds; the backfill read commas only,
 * refused units, comments and `sep=;` in the header, took epoch milliseconds for seconds and a
 * column named twice; all three took a row longer than the header with a filled extra cell.
 */
import { describe, expect, it } from "vitest";
import { AssessCsvError, parseAssessCsv } from "@/lib/assessment";
import { decodeText } from "@/lib/csv";
import { parseStepTestCsv, StepTestFormatError } from "@/lib/step-tests/csv";
import { readSampleCsv } from "@/server/backfill/sample-csv";

interface Read {
  /** [t from the first row (s), sp, pv, mv] per row. */
  rows: number[][];
  modes: (string | null | undefined)[];
  cautions: string[];
}
interface Refused {
  line: number;
  message: string;
  /** Rows read besides the refused one (the backfill goes on; the others stop). */
  others: number;
}
type Outcome = Read | Refused;

const relative = (rows: number[][]): number[][] => rows.map((r) => [r[0]! - rows[0]![0]!, ...r.slice(1)]);

const READERS: Record<string, (input: string | Uint8Array) => Promise<Outcome>> = {
  assessment: async (input) => {
    try {
      const r = parseAssessCsv(typeof input === "string" ? input : decodeText(input));
      return { rows: relative(r.samples.map((s) => [s.t, s.sp, s.pv, s.mv])), modes: r.samples.map((s) => s.mode), cautions: r.cautions };
    } catch (e) {
      if (!(e instanceof AssessCsvError)) throw e;
      return { line: e.line, message: e.message, others: 0 };
    }
  },
  "step test": async (input) => {
    try {
      const r = parseStepTestCsv(input);
      return { rows: r.rows.map((s) => [s.t, s.sp!, s.pv, s.mv]), modes: r.rows.map((s) => s.mode), cautions: r.warnings };
    } catch (e) {
      if (!(e instanceof StepTestFormatError)) throw e;
      return { line: e.location.row, message: e.message, others: 0 };
    }
  },
  backfill: async (input) => {
    const cautions: string[] = [];
    async function* bytes(): AsyncGenerator<Uint8Array | string> {
      yield input;
    }
    const rows: number[][] = [];
    const modes: string[] = [];
    const refused: Refused[] = [];
    for await (const rec of readSampleCsv(bytes(), undefined, (_, c) => cautions.push(c))) {
      if ("reject" in rec) refused.push({ line: rec.line, message: `${rec.reject}: ${rec.detail}`, others: 0 });
      else {
        rows.push([rec.sample.t / 1000, rec.sample.sp, rec.sample.pv, rec.sample.mv]);
        modes.push(rec.sample.mode);
      }
    }
    if (refused.length) return { ...refused[0]!, others: rows.length };
    return { rows: relative(rows), modes, cautions };
  },
};

const N = 30;
/** The values written: t = 2 s apart (from 1,790,000,000 s since 1970), sp, pv, mv. */
const written = Array.from({ length: N }, (_, k) => [2 * k, 50.5, 49.25 + k / 4, k > 10 ? 35.5 : 30]);
const T0 = 1_790_000_000;
const comma = (v: number) => String(v).replace(".", ",");
const table = (header: string, sep: string, cell: (v: number) => string = String, end = "\n", t: (s: number) => string = (s) => String(T0 + s)) =>
  [header, ...written.map(([s, ...v]) => [t(s!), ...v.map(cell)].join(sep))].join(end) + end;

const accepted: [string, string | Uint8Array][] = [
  ["semicolons with decimal commas", table("t;sp;pv;mv", ";", comma)],
  ["a spreadsheet's sep=; line before the header", `sep=;\n${table("t;sp;pv;mv", ";", comma)}`],
  ["tab-separated", table("t\tsp\tpv\tmv", "\t")],
  ["lone CR line ends", table("t,sp,pv,mv", ",", String, "\r")],
  ["quoted header names in a semicolon file", table('"t";"sp";"pv";"mv"', ";")],
  ["units in the header (time in minutes)", table("t [min],sp [degC],pv (degC),mv [%]", ",", String, "\n", (s) => String(s / 60))],
  ["the names historians also write (Time, Setpoint, OP; common practice)", table("Time,Setpoint,PV,OP", ",")],
  ["a timestamp column, a set point written out and the controller output as OUT, semicolon-separated", table("timestamp;set point;pv;out", ";")],
  ["comment lines before the header", `# exported by the Quarry Lane historian\n# one loop\n${table("T, SP, PV, MV", ",")}`],
  ["UTF-16 little-endian with a byte order mark (spreadsheet Unicode text)", new Uint8Array([0xff, 0xfe, ...Buffer.from(table("t\tsp\tpv\tmv", "\t", String, "\r\n"), "utf16le")])],
];

describe("one CSV layer: what one reader accepts, all three read to the values written", () => {
  for (const [name, input] of accepted) {
    for (const [reader, read] of Object.entries(READERS)) {
      it(`${reader}: ${name}`, async () => {
        const out = await read(input);
        expect(out, JSON.stringify(out).slice(0, 300)).toHaveProperty("rows");
        expect((out as Read).rows).toEqual(written);
        expect((out as Read).cautions).toEqual([]);
      });
    }
  }

  for (const [reader, read] of Object.entries(READERS)) {
    it(`${reader}: mode words in any case and their short forms (Automatic, MAN, casc)`, async () => {
      const words = ["Automatic", "MAN", "casc"];
      const text = ["t,sp,pv,mv,mode", ...written.map(([s, ...v], k) => [T0 + s!, ...v, words[k % 3]].join(","))].join("\n");
      const out = (await read(text)) as Read;
      expect(out.modes).toEqual(written.map((_, k) => ["auto", "manual", "cascade"][k % 3]));
    });

    it(`${reader}: times in milliseconds since 1970 without a unit are read as milliseconds, with a caution`, async () => {
      const text = table("t,sp,pv,mv", ",", String, "\n", (s) => String((T0 + s / 4) * 1000));
      const out = (await read(text)) as Read;
      expect(out.rows.map((r) => r[0])).toEqual(written.map(([s]) => s! / 4)); // 0.5 s apart, not 500 s
      expect(out.cautions.join(" ")).toMatch(/read as milliseconds since 1970/);
    });
  }
});

/** A file of the written values with line `bad` (1-based; the header is line 1) replaced. */
const withLine = (header: string, sep: string, bad: number, line: string, cell: (v: number) => string = String) => {
  const lines = table(header, sep, cell).split("\n");
  lines[bad - 1] = line;
  return lines.join("\n");
};

const refused: [string, string, number, RegExp, boolean][] = [
  ["30 February", withLine("t,sp,pv,mv", ",", 5, "2026-02-30T00:00:00Z,50.5,50,30"), 5, /"2026-02-30T00:00:00Z" has no such date/, true],
  ["a row longer than the header with a filled extra cell (an unquoted decimal comma shifts the columns)", withLine("t,sp,pv,mv", ",", 7, `${T0 + 10},50,5,50.75,30`), 7, /5 cells, the header has 4; a cell that holds the separator/, true],
  ["decimal points and commas mixed in a semicolon file", withLine("t;sp;pv;mv", ";", 9, `${T0 + 14};50.5;51.25;30`, comma), 9, /decimal point here, a decimal comma at line 2/, true],
  ["a time too large for seconds or milliseconds without a unit", withLine("t,sp,pv,mv", ",", 2, "1790000000000000,50.5,49.25,30"), 2, /too large for seconds or milliseconds since 1970/, true],
  ["seconds mixed with date-times", withLine("t,sp,pv,mv", ",", 4, "2026-11-03T08:00:04Z,50.5,49.75,30"), 4, /mixes a date-time with the seconds above/, true],
  ["numeric mode codes", ["t,sp,pv,mv,mode", ...written.map(([s, ...v], k) => [T0 + s!, ...v, k === 6 ? "2" : "auto"].join(","))].join("\n"), 8, /Numeric mode codes differ/, true],
  ["a column named twice", table("t,sp,pv,mv,PV", ","), 1, /the column "pv" appears twice \(columns 3 and 5\)/, false],
  ["the output under two other names", table("t,sp,pv,op,co", ","), 1, /the column "mv" appears twice \("op" in column 4 and "co" in column 5\)/, false],
];

describe("one CSV layer: what one reader refuses, all three refuse naming the line", () => {
  for (const [name, text, line, message, rowLevel] of refused) {
    for (const [reader, read] of Object.entries(READERS)) {
      it(`${reader}: ${name} (line ${line})`, async () => {
        const out = (await read(text)) as Refused;
        expect(out, JSON.stringify(out).slice(0, 300)).toHaveProperty("line", line);
        expect(out.message).toMatch(message);
        // The backfill judges each row alone and loses none of the others.
        if (reader === "backfill") expect(out.others).toBe(rowLevel ? N - 1 : 0);
      });
    }
  }
});

describe("a cell without a number: each reader's own rule, each naming the cell", () => {
  const text = withLine("t,sp,pv,mv", ",", 6, `${T0 + 8},50.5,I/O Timeout,30`);
  it("the assessment reads it as missing (that sample counts as bad), with a caution naming the place", async () => {
    const out = (await READERS.assessment!(text)) as Read;
    expect(out.rows[4]![2]).toBeNaN();
    expect(out.cautions.join(" ")).toMatch(/1 value cell held no number \(first at line 6, column 3 \("I\/O Timeout"\)\)/);
  });
  it("a step test refuses it (identification needs every value)", async () => {
    expect(await READERS["step test"]!(text)).toMatchObject({ line: 6, message: 'Line 6, column 3 (pv): "I/O Timeout" is not a number.' });
  });
  it("the backfill rejects that row as live telemetry would and keeps the others", async () => {
    expect(await READERS.backfill!(text)).toEqual({ line: 6, message: 'non-finite: column 3 (pv): "I/O Timeout" holds no number.', others: N - 1 });
  });
});
