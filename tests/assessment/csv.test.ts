/**
 * Historian export parsing: every error names its line (1-based, counting comments and the
 * header), columns in any order, ISO 8601 times with a zone, optional mode and quality columns
 * (OPC quality codes: >= 192 good, 64-191 uncertain, below 64 bad; common practice).
 */
import { describe, expect, it } from "vitest";
import { AssessCsvError, parseAssessCsv } from "@/lib/assessment";

function errorOf(text: string): AssessCsvError {
  try {
    parseAssessCsv(text);
  } catch (e) {
    if (e instanceof AssessCsvError) return e;
    throw e;
  }
  throw new Error("expected an AssessCsvError");
}

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

  it("reads a quality column (words or OPC codes); empty values only on bad rows", () => {
    const r = parseAssessCsv("t,sp,pv,mv,quality\n0,5,5,5,good\n1,5,,5,bad\n2,5,5,5,192\n3,5,5,5,64\n4,5,5,5,0\n");
    expect(r.samples.map((s) => s.quality)).toEqual(["good", "bad", "good", "uncertain", "bad"]);
    expect(Number.isNaN(r.samples[1]!.pv)).toBe(true);
    expect(errorOf("t,sp,pv,mv,quality\n0,5,5,5,good\n1,5,,5,good\n").line).toBe(3);
  });

  it("names the line of each kind of fault", () => {
    const cases: [string, number, RegExp][] = [
      ["", 1, /empty/],
      ["t,pv,mv\n0,1,1\n", 1, /lacks sp/],
      ["t,sp,pv,mv\n0,1,1,1\n1,1,abc,1\n", 3, /Line 3, column 3 \(pv\): "abc" is not a number/],
      ["t,sp,pv,mv\n0,1,1,1\n# note\n1,1,1,1\n1,1,1,1\n", 5, /time does not increase/],
      ["t,sp,pv,mv\n0,1,1,1\n1,1,1\n", 3, /3 cells, the header has 4/],
      ["t,sp,pv,mv,mode\n0,1,1,1,auto\n1,1,1,1,remote\n", 3, /mode.*not auto, manual or cascade/],
      ["t,sp,pv,mv\n0,1,1,1\nyesterday,1,1,1\n", 3, /neither seconds nor an ISO 8601/],
      ["t,sp,pv,mv\n2026-12-01T00:00:00,1,1,1\n", 2, /ISO 8601 date-time with a zone/],
      ["t,sp,pv,mv\n0,1,\"1,5\",1\n1,1,1,1\n", 2, /decimal separator/],
      ["t,sp,pv,mv\n0,1,1,1\n2026-12-01T00:00:01Z,1,1,1\n", 3, /mixes/],
      ["t,sp,pv,mv,t\n0,1,1,1,0\n", 1, /appears twice/],
      ["t,sp,pv,mv\n0,1,1,1\n", 2, /Only 1 data row/],
    ];
    for (const [text, line, message] of cases) {
      const e = errorOf(text);
      expect(e.line, text).toBe(line);
      expect(e.message, text).toMatch(message);
    }
  });
});
