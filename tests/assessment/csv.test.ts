/**
 * Historian export parsing: every error names its line (1-based, counting comments and the
 * header), columns in any order, ISO 8601 times with a zone, optional mode and quality columns
 * (OPC quality codes: >= 192 good, 64-191 uncertain, below 64 bad; common practice).
 */
import { describe, expect, it } from "vitest";
import { AssessCsvError, parseAssessCsv } from "@/lib/assessment";
import { itRefuses, thrown } from "../helpers/thrown";

const errorOf = (text: string): AssessCsvError => thrown(() => parseAssessCsv(text), AssessCsvError);

describe("parseAssessCsv", () => {
  it("reads t,sp,pv,mv,mode in seconds", () => {
    const r = parseAssessCsv("t,sp,pv,mv,mode\n0,50,49.5,40,auto\n1,50,49.7,40.2,MAN\n2,50,49.9,40.1,cascade\n");
    expect(r.samples).toEqual([
      { t: 0, sp: 50, pv: 49.5, mv: 40, mode: "auto" },
      { t: 1, sp: 50, pv: 49.7, mv: 40.2, mode: "manual" },
      { t: 2, sp: 50, pv: 49.9, mv: 40.1, mode: "cascade" },
    ]);
    expect(r.hasMode).toBe(true);
  });

  it("accepts columns in any order, units in brackets, extra columns, CRLF, comments and ISO times with zones", () => {
    const text = "# export from the historian\r\nMode,PV [degC],note,MV [%],T,SP [degC]\r\nauto,70.1,x,33,2026-12-01T10:00:00+01:00,70\r\nauto,70.2,y,33.5,2026-12-01T09:00:05Z,70\r\n";
    const r = parseAssessCsv(text);
    expect(r.samples.map((s) => s.t - r.samples[0]!.t)).toEqual([0, 5]);
    expect(r.samples[1]).toMatchObject({ sp: 70, pv: 70.2, mv: 33.5, mode: "auto" });
    expect(r.startTime).toBe("2026-12-01T09:00:00.000Z");
  });

  it("converts a time unit in the header (t [min])", () => {
    const r = parseAssessCsv("t [min],sp,pv,mv\n0,1,1,1\n0.5,1,1,1\n");
    expect(r.samples[1]!.t).toBe(30);
  });

  it("reads a quality column (words or OPC codes); an empty value on a bad row passes without a caution", () => {
    const r = parseAssessCsv("t,sp,pv,mv,quality\n0,5,5,5,good\n1,5,,5,bad\n2,5,5,5,192\n3,5,5,5,64\n4,5,5,5,0\n");
    expect(r.samples.map((s) => s.quality)).toEqual(["good", "bad", "good", "uncertain", "bad"]);
    expect(Number.isNaN(r.samples[1]!.pv)).toBe(true);
    expect(r.cautions).toEqual([]);
    // An empty quality cell is no quality given: the values decide.
    expect(parseAssessCsv("t,sp,pv,mv,quality\n0,5,5,5,\n1,5,5.5,5,good\n").samples).toEqual([{ t: 0, sp: 5, pv: 5, mv: 5 }, { t: 1, sp: 5, pv: 5.5, mv: 5, quality: "good" }]);
    // An empty value on a row called good is missing, with a caution naming the line.
    const g = parseAssessCsv("t,sp,pv,mv,quality\n0,5,5,5,good\n1,5,,5,good\n");
    expect(Number.isNaN(g.samples[1]!.pv)).toBe(true);
    expect(g.cautions.join(" ")).toMatch(/1 value cell held no number \(first at line 3, column 3/);
  });

  it("reads date-times without a zone as clock times (their spacing), with a caution; a clock going back is refused above", () => {
    const g = parseAssessCsv("t,sp,pv,mv\n2026-12-01 08:00:00,1,1,1\n2026-12-01 08:00:01.5,1,1,1\n2026-12-01T08:00:03,1,1,1\n");
    expect(g.samples.map((x) => x.t - g.samples[0]!.t)).toEqual([0, 1.5, 3]);
    expect(g.cautions.join(" ")).toMatch(/have no zone \("2026-12-01 08:00:00"\): read as clock times, so only their spacing counts/);
  });

  it("names the line of each kind of fault", () => {
    const cases: [string, number, RegExp][] = [
      ["", 1, /empty/],
      ["t,pv,mv\n0,1,1\n", 1, /lacks sp/],
      ["t,sp,pv,mv\n0,1,1,1\n1,1,1.2.3,1\n", 3, /Line 3, column 3 \(pv\): "1.2.3" is not a number/],
      ["t,sp,pv,mv\n0,1,1,1\n# note\n2,1,1,1\n1,1,1,1\n", 5, /Line 5, column 1 \(t\): time goes back from line 4/],
      ["t,sp,pv,mv\n0,1,1,1\n1,1,1\n", 3, /3 cells, the header has 4/],
      ["t,sp,pv,mv,mode\n0,1,1,1,auto\n1,1,1,1,remote\n", 3, /mode.*not auto, manual or cascade/],
      ["t,sp,pv,mv\n0,1,1,1\nyesterday,1,1,1\n", 3, /neither seconds nor an ISO 8601/],
      ["t,sp,pv,mv\n2026-10-25 02:59:59,1,1,1\n2026-10-25 02:00:00,1,1,1\n", 3, /Line 3, column 1 \(t\): time goes back from line 2/],
      ["t,sp,pv,mv\n0,1,\"1,5\",1\n1,1,1,1\n", 2, /decimal separator/],
      ["t,sp,pv,mv\n0,1,1,1\n2026-12-01T00:00:01Z,1,1,1\n", 3, /mixes/],
      ["t,sp,pv,mv,t\n0,1,1,1,0\n", 1, /appears twice/],
      ["t,sp,pv,mv\n0,1,1,1\n", 2, /Line 2: only 1 data row/],
    ];
    for (const [text, line, message] of cases) {
      const e = errorOf(text);
      expect(e.line, text).toBe(line);
      expect(e.message, text).toMatch(message);
    }
  });
});

/**
 * Exports as other people's tools write them: what is the assessment's own (status text, mode
 * words, repeated times, size). The file's layout, time and number cells are the shared CSV
 * layer's and are tested in tests/csv/exports.test.ts (and across the three readers in
 * tests/csv/readers.test.ts).
 */
describe("parseAssessCsv on hostile exports", () => {
  it("reads status text and empty cells (NaN, Bad, #N/A, I/O Timeout) as missing, with a caution naming the first", () => {
    const r = parseAssessCsv("t,sp,pv,mv\n0,50,49,30\n1,50,NaN,30\n2,,49,30\n3,50,Bad,30\n4,50,49,#N/A\n5,50,I/O Timeout,30\n6,50,48.5,31\n");
    const nan = r.samples.map((s) => [s.sp, s.pv, s.mv].map(Number.isNaN));
    expect(nan).toEqual([[false, false, false], [false, true, false], [true, false, false], [false, true, false], [false, false, true], [false, true, false], [false, false, false]]);
    expect(r.samples[6]).toEqual({ t: 6, sp: 50, pv: 48.5, mv: 31 });
    expect(r.cautions.join(" ")).toMatch(/5 value cells held no number \(first at line 3, column 3 \("NaN"\)\)/);
  });

  it("reads mode words in any letter case; an empty mode is unknown, with a caution", () => {
    const r = parseAssessCsv("t,sp,pv,mv,mode\n0,1,2,3,AUTO\n1,1,2,3,Man\n2,1,2,3,CAS\n3,1,2,3,Automatic\n4,1,2,3,\n");
    expect(r.samples.map((s) => s.mode)).toEqual(["auto", "manual", "cascade", "auto", undefined]);
    expect(r.cautions.join(" ")).toMatch(/1 row had no mode/);
  });

  it("skips rows of separators only and reads a row without its trailing optional cells as unknown mode", () => {
    const r = parseAssessCsv("t,sp,pv,mv,mode\n0,1,2,3,auto\n1,1,2.5,3\n,,,,\n2,1,2,3,man\n,,,,\n");
    expect(r.samples).toEqual([{ t: 0, sp: 1, pv: 2, mv: 3, mode: "auto" }, { t: 1, sp: 1, pv: 2.5, mv: 3 }, { t: 2, sp: 1, pv: 2, mv: 3, mode: "manual" }]);
    expect(r.cautions.join(" ")).toMatch(/1 row had no mode/);
  });

  it("drops a repeated row and keeps the later of two rows at one instant, with cautions", () => {
    const r = parseAssessCsv("t,sp,pv,mv\n0,1,2,3\n1,1,2,3\n1,1,2,3\n2,1,2,3\n2,1,2.5,3\n3,1,2,3\n");
    expect(r.samples.map((s) => [s.t, s.pv])).toEqual([[0, 2], [1, 2], [2, 2.5], [3, 2]]);
    expect(r.cautions.join(" ")).toMatch(/1 row repeated the row before.*1 row had the time of the row before with other values \(first at line 6\)/);
  });

  it("reads 300,000 rows with the values written", () => {
    const n = 300_000;
    const lines = ["t,sp,pv,mv"];
    for (let i = 0; i < n; i++) lines.push(`${i},50,${(i % 1000) / 10},${i % 7}`);
    const r = parseAssessCsv(lines.join("\n"));
    expect(r.samples.length).toBe(n);
    expect(r.samples[123_456]).toEqual({ t: 123_456, sp: 50, pv: 45.6, mv: 123_456 % 7 });
    expect(r.samples[n - 1]).toEqual({ t: n - 1, sp: 50, pv: 99.9, mv: (n - 1) % 7 });
  });

  const refused: [string, string, number, string, RegExp][] = [
    ["rows out of time order", "t,sp,pv,mv\n0,1,2,3\n5,1,2,3\n4,1,2,3\n", 4, "t", /time goes back from line 3/],
    ["numeric mode codes", "t,sp,pv,mv,mode\n0,1,2,3,1\n1,1,2,3,0\n", 2, "mode", /Numeric mode codes differ/],
    ["a header only", "t,sp,pv,mv\r\n", 1, "", /only 0 data rows/],
  ];
  itRefuses(refused, errorOf);
});
