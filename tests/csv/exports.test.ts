/**
 * The shared CSV layer (lib/csv) on exports as other people's tools write them, read here with the
 * layer alone (lines, table, time and number cells) as every reader reads a file's layout. For
 * each accepted variant the values read are checked against the values written into the file
 * (the file is the reference); each refused variant must name its line and column. UTC instants
 * are checked against the platform's Date.UTC (a general-purpose reference, not this parser).
 * Moved here from tests/assessment/csv.test.ts when the layer left the assessment.
 */
import { describe, expect, it } from "vitest";
import { CsvError, CsvTable, decodeText, lineReader, LineSplitter, NumberReader, TextSniffer, TimeColumn, TOO_LONG, withoutBom } from "@/lib/csv";
import { itRefuses, thrown } from "../helpers/thrown";

/** A file read with the layer alone: [t, sp, pv, mv] per row (t in seconds), or a CsvError. */
function read(text: string): { rows: number[][]; cautions: string[]; startTime: string | null } {
  const lines = lineReader(withoutBom(text));
  const table = new CsvTable<"t" | "sp" | "pv" | "mv">({ required: ["t", "sp", "pv", "mv"], optional: [], expected: "t,sp,pv,mv" });
  let cells: { time: TimeColumn; numbers: NumberReader } | null = null;
  const rows: number[][] = [];
  let n = 0;
  for (let l = lines.next(); l !== null; l = lines.next()) {
    const row = table.row(l, (n = lines.lineNo()));
    if (!cells && table.header) {
      const numbers = new NumberReader(table.header.sep === ";");
      cells = { numbers, time: new TimeColumn(table.header.unit("t"), { line: table.header.line, column: table.header.index.t! }, numbers) };
    }
    if (!row || !cells) continue;
    const { index } = table.header!;
    rows.push(
      (["t", "sp", "pv", "mv"] as const).map((c) => {
        const at = `line ${n}, column ${index[c]! + 1}`;
        const v = c === "t" ? cells!.time.read(row[index[c]!]!, at) : cells!.numbers.read(row[index[c]!]!, at);
        if (typeof v === "string") throw new CsvError(`Line ${n}, column ${index[c]! + 1} (${c}): ${v}`, n, c, index[c]! + 1);
        return v;
      }),
    );
  }
  table.end(n);
  return { rows, cautions: cells?.time.cautions ?? [], startTime: cells?.time.startTime ?? null };
}

const errorOf = (text: string): CsvError => thrown(() => read(text), CsvError);

const utc = (...a: [number, number, number, number, number, number]) => Date.UTC(a[0], a[1] - 1, a[2], a[3], a[4], a[5]) / 1000;
const rows = (text: string) => read(text).rows;

describe("the CSV layer on hostile exports", () => {
  const written = [
    [0, 50.5, 49.25, 30],
    [1, 50.5, 49.5, 31],
  ];
  const accepted: [string, string][] = [
    ["UTF-8 byte order mark", "\ufefft,sp,pv,mv\n0,50.5,49.25,30\n1,50.5,49.5,31\n"],
    ["CRLF line ends", "t,sp,pv,mv\r\n0,50.5,49.25,30\r\n1,50.5,49.5,31\r\n"],
    ["lone CR line ends", "t,sp,pv,mv\r0,50.5,49.25,30\r1,50.5,49.5,31\r"],
    ["trailing blank lines and trailing separators", "t,sp,pv,mv,\n0,50.5,49.25,30,\n1,50.5,49.5,31,\n\n\r\n"],
    ["quoted headers and quoted cells", '"t","sp","pv","mv"\n"0","50.5","49.25","30"\n"1","50.5","49.5","31"\n'],
    ["tab-separated", "t\tsp\tpv\tmv\n0\t50.5\t49.25\t30\n1\t50.5\t49.5\t31\n"],
    ["semicolons with decimal commas", "t;sp;pv;mv\n0;50,5;49,25;30\n1;50,5;49,5;31\n"],
    ["semicolons with decimal points", "t;sp;pv;mv\n0;50.5;49.25;30\n1;50.5;49.5;31\n"],
    ["semicolons with a quoted comma in a unit", '"pv [m3/h, std]";t;sp;mv\n49,25;0;50,5;30\n49,5;1;50,5;31\n'],
    ["header names in other cases and with spaces", 'T ," Sp",PV ,  mV\n0,50.5,49.25,30\n1,50.5,49.5,31\n'],
    ["units in brackets and parentheses", "t (s),sp [degC],pv(degC),mv [%]\n0,50.5,49.25,30\n1,50.5,49.5,31\n"],
    ["time unit written out", "t [seconds],sp,pv,mv\n0,50.5,49.25,30\n1,50.5,49.5,31\n"],
  ];
  for (const [name, text] of accepted) {
    it(`accepts ${name} with the values written`, () => {
      expect(rows(text)).toEqual(written);
      expect(read(text).cautions).toEqual([]);
    });
  }

  it("reads a time column in days (a spreadsheet's serial date-time, header t [d]) as seconds", () => {
    // 46,000.5 days and one second later (0.5 + 1/86,400 day): 43,200 s and 43,201 s past day 46,000
    const out = rows("t [d],sp,pv,mv\n46000.5,50.5,49.25,30\n46000.50001157407,50.5,49.5,31\n");
    expect(out[0]![0]).toBe(46_000.5 * 86_400);
    expect(out[1]![0]! - out[0]![0]!).toBeCloseTo(1, 3);
  });

  it("reads ISO 8601 variants: fraction (point or comma), Z or UTC, a space for T, offsets +0530, +05:30, -03", () => {
    const t0 = utc(2026, 3, 1, 0, 0, 0);
    const text = [
      "t,sp,pv,mv",
      "2026-03-01T00:00:00.250Z,1,2,3",
      '"2026-03-01 00:00:01,5Z",1,2,3',
      "2026-03-01 05:30:02+0530,1,2,3",
      "2026-03-01T05:30:03+05:30,1,2,3",
      "2026-02-28T21:00:04-03,1,2,3",
      "2026-03-01 00:00:05 UTC,1,2,3",
      "2026-03-01t00:00:06z,1,2,3",
    ].join("\n");
    const r = read(text);
    expect(r.rows.map((s) => s[0]! - t0)).toEqual([0.25, 1.5, 2, 3, 4, 5, 6]);
    expect(r.startTime).toBe("2026-03-01T00:00:00.250Z");
  });

  it("reads 24:00:00 as the end of that day (ISO 8601)", () => {
    expect(rows("t,sp,pv,mv\n2026-03-01T23:59:59Z,1,2,3\n2026-03-01T24:00:00Z,1,2,3\n").map((r) => r[0])).toEqual([utc(2026, 3, 1, 23, 59, 59), utc(2026, 3, 2, 0, 0, 0)]);
  });

  it("keeps a clock going back (DST fall-back) as distinct instants when the offsets are given", () => {
    const r = rows("t,sp,pv,mv\n2026-10-25T02:30:00+02:00,1,2,3\n2026-10-25T02:00:00+01:00,1,2,4\n2026-10-25T02:30:00+01:00,1,2,5\n");
    expect(r.map((x) => x[0])).toEqual([utc(2026, 10, 25, 0, 30, 0), utc(2026, 10, 25, 1, 0, 0), utc(2026, 10, 25, 1, 30, 0)]);
    expect(r.map((x) => x[3])).toEqual([3, 4, 5]);
  });

  it("reads times in milliseconds since 1970, with the unit or (with a caution) without", () => {
    const withUnit = read("t [ms],sp,pv,mv\n1764547200000,1,2,3\n1764547200500,1,2,3\n");
    expect(withUnit.rows.map((s) => s[0])).toEqual([1764547200, 1764547200.5]);
    expect(withUnit.cautions).toEqual([]);
    const bare = read("t,sp,pv,mv\n1764547200000,1,2,3\n1764547200500,1,2,3\n");
    expect(bare.rows.map((s) => s[0])).toEqual([1764547200, 1764547200.5]);
    expect(bare.startTime).toBe("2025-12-01T00:00:00.000Z");
    expect(bare.cautions.join(" ")).toMatch(/read as milliseconds since 1970/);
  });

  const refused: [string, string, number, string, RegExp][] = [
    ["a date that does not exist (30 February)", "t,sp,pv,mv\n2026-02-30T00:00:00Z,1,2,3\n2026-03-05T00:00:00Z,1,2,3\n", 2, "t", /"2026-02-30T00:00:00Z" has no such date/],
    ["a leap second", "t,sp,pv,mv\n2026-12-31T23:59:59Z,1,2,3\n2026-12-31T23:59:60Z,1,2,3\n", 3, "t", /leap second/],
    ["local times without a zone (ambiguous at DST fall-back)", "t,sp,pv,mv\n2026-10-25 02:30:00,1,2,3\n2026-10-25 02:30:00,1,2,3\n", 2, "t", /without a zone/],
    ["times too large for seconds or milliseconds without a unit", "t,sp,pv,mv\n1764547200000000,1,2,3\n1764547200001000,1,2,3\n", 2, "t", /give the unit in the header/],
    ["decimal commas in a tab-separated file", "t\tsp\tpv\tmv\n0\t1,5\t2\t3\n1\t1\t2\t3\n", 2, "sp", /decimal comma is read only in files separated by semicolons/],
    ["decimal points and commas mixed in one file", "t;sp;pv;mv\n0;1,5;2;3\n1;1.234;2;3\n", 3, "sp", /decimal point here, a decimal comma at line 2, column 2/],
    ["digit grouping", 't,sp,pv,mv\n0,1,"1,234.5",3\n1,1,2,3\n', 2, "pv", /Digit grouping/],
    ["a number with a letter in it", "t,sp,pv,mv\n0,1,2,3\n1,1,4O.5,3\n", 3, "pv", /"4O.5" is not a number/],
    ["a line with another separator than the header", "t,sp,pv,mv\n0;1;2;3\n", 2, "sp", /separated by ",", this line has ";"/],
    ["a missing column", "t,sp,pv\n0,1,2\n1,1,2\n", 1, "mv", /lacks mv/],
    ["a row longer than the header with a filled extra cell", "t,sp,pv,mv\n0,1,2,3\n1,1,2,5,3\n", 3, "", /5 cells, the header has 4; a cell that holds the separator/],
    ["an unknown time unit", "t [fortnight],sp,pv,mv\n0,1,2,3\n", 1, "t", /time unit "fortnight" is not one of s, ms, min, h/],
    ["a column named twice", "t,sp,pv,mv,SP\n0,1,2,3,1\n", 1, "sp", /the column "sp" appears twice \(columns 2 and 5\)/],
    ["an empty file", "", 1, "", /The file is empty/],
  ];
  itRefuses(refused, errorOf);
});

describe("lines and text of a stream", () => {
  const text = "t,sp,pv,mv\r\n0,1,2,3\r1,1,2,3\n\n2,1,2,3\r\n3,1,2,3";
  const whole: string[] = [];
  const r = lineReader(text);
  for (let l = r.next(); l !== null; l = r.next()) whole.push(l);

  it("splits LF, CRLF and lone CR alike whole and in pieces cut at every place (a CRLF cut between its CR and LF is one line end)", () => {
    expect(whole).toEqual(["t,sp,pv,mv", "0,1,2,3", "1,1,2,3", "", "2,1,2,3", "3,1,2,3"]);
    for (let cut = 0; cut <= text.length; cut++) {
      const s = new LineSplitter();
      expect([...s.push(text.slice(0, cut)), ...s.push(text.slice(cut)), ...s.end()], `cut at ${cut}`).toEqual(whole);
    }
  });

  it("hands a line longer than the bound out as TOO_LONG without keeping it, and reads the lines after it", () => {
    const s = new LineSplitter(10);
    const got = [...s.push("0,1,2,3\n"), ...s.push("x".repeat(8)), ...s.push("y".repeat(8)), ...s.push("z\n1,1,2,3\n"), ...s.end()];
    expect(got).toEqual(["0,1,2,3", TOO_LONG, "1,1,2,3"]);
  });

  it("decodes UTF-8 (BOM dropped) and UTF-16 with a BOM, big- or little-endian, or little-endian without, cut at every byte", () => {
    const le = Buffer.from(text, "utf16le");
    const be = Buffer.from(le).swap16();
    const files: [string, Uint8Array][] = [
      ["UTF-8 with BOM", Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), Buffer.from(`°C ${text}`, "utf8")])],
      ["UTF-16LE with BOM", Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(`°C ${text}`, "utf16le")])],
      ["UTF-16BE with BOM", Buffer.concat([Buffer.from([0xfe, 0xff]), Buffer.from(Buffer.from(`°C ${text}`, "utf16le")).swap16()])],
      ["UTF-16LE without BOM", le],
    ];
    for (const [name, bytes] of files) {
      const expected = name.endsWith("without BOM") ? text : `°C ${text}`;
      expect(decodeText(bytes), name).toBe(expected);
      for (let cut = 0; cut <= bytes.length; cut++) {
        const s = new TextSniffer();
        expect(s.push(bytes.subarray(0, cut)) + s.push(bytes.subarray(cut)) + s.end(), `${name} cut at ${cut}`).toBe(expected);
      }
    }
    expect(be.length).toBe(le.length);
  });
});
