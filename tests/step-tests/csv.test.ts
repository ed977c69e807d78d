/**
 * The step-test CSV reader: every refusal names the file line and the column. The format rules
 * are the product's own (lib/step-tests/csv.ts); quoting follows RFC 4180 and date-times ISO 8601.
 */
import { describe, expect, it } from "vitest";
import { MAX_CSV_BYTES, MIN_ROWS, parseStepTestCsv, StepTestFormatError, StepTestTooLargeError, type CsvLocation } from "@/lib/step-tests/csv";

const LOOP = { pvUnits: "degC", mvUnits: "%", pvLo: 80, pvHi: 180, mvLo: 0, mvHi: 100 };

function rows(n: number, f: (k: number) => string = (k) => `${k},${40 + (k > 10 ? 5 : 0)},${130 + k * 0.01}`): string[] {
  return Array.from({ length: n }, (_, k) => f(k));
}
const file = (header: string, body: string[]) => [header, ...body].join("\n") + "\n";

function locationOf(fn: () => unknown): CsvLocation & { message: string } {
  try {
    fn();
  } catch (e) {
    expect(e).toBeInstanceOf(StepTestFormatError);
    const err = e as StepTestFormatError;
    expect(err.status).toBe(422);
    expect(err.details).toEqual(err.location);
    return { ...err.location, message: err.message };
  }
  throw new Error("expected a StepTestFormatError");
}

describe("parseStepTestCsv: accepted files", () => {
  it("reads t, mv, pv, sp, mode in any order and case, ignoring other columns, comments and a BOM", () => {
    const text = "\uFEFF# exported from the historian\n" + file("Mode,PV,extra,T,MV,sp", rows(40, (k) => `manual,${130 + k},x,${10 + k},${40 + (k > 5 ? 5 : 0)},130`));
    const p = parseStepTestCsv(text, LOOP);
    expect(p.rows).toHaveLength(40);
    expect(p.rows[0]).toEqual({ line: 3, t: 0, mv: 40, pv: 130, sp: 130, mode: "manual" });
    expect(p.rows[39]!.t).toBe(39); // times from the first row
    expect(p.hasSp && p.hasMode).toBe(true);
    expect(p.timeKind).toBe("seconds");
  });

  it("converts a time unit in the header ([min] x 60, [ms] / 1000)", () => {
    expect(parseStepTestCsv(file("t [min],mv,pv", rows(40, (k) => `${k * 0.5},${k > 5 ? 45 : 40},130`)), LOOP).rows[1]!.t).toBe(30);
    expect(parseStepTestCsv(file("t (ms),mv,pv", rows(40, (k) => `${k * 500},${k > 5 ? 45 : 40},130`)), LOOP).rows[1]!.t).toBe(0.5);
  });

  it("reads ISO 8601 date-times with a zone and keeps the start time", () => {
    const base = Date.UTC(2026, 10, 3, 8, 0, 0);
    const p = parseStepTestCsv(file("t,mv,pv", rows(40, (k) => `${new Date(base + k * 2000).toISOString()},${k > 5 ? 45 : 40},130`)), LOOP);
    expect(p.timeKind).toBe("iso");
    expect(p.startTime).toBe("2026-11-03T08:00:00.000Z");
    expect(p.rows[3]!.t).toBe(6);
    // An offset instead of Z (ISO 8601): 09:00+01:00 is 08:00Z.
    const q = parseStepTestCsv(file("t,mv,pv", rows(40, (k) => `2026-11-03T09:00:${String(k).padStart(2, "0")}+01:00,${k > 5 ? 45 : 40},130`)), LOOP);
    expect(q.startTime).toBe("2026-11-03T08:00:00.000Z");
  });

  it("accepts semicolons as separators and quoted cells (RFC 4180)", () => {
    const p = parseStepTestCsv(file('t;mv;pv;"note"', rows(40, (k) => `${k};${k > 5 ? 45 : 40};130;"a; ""b"""`)), LOOP);
    expect(p.rows[7]!.mv).toBe(45);
  });

  it("accepts unit spellings that mean the same (degC, °C, C)", () => {
    for (const h of ["pv [degC]", "pv [°C]", "pv [C]", "pv [ DEGC ]"]) {
      expect(parseStepTestCsv(file(`t,mv [%],${h}`, rows(40)), LOOP).units.pv).not.toBeNull();
    }
  });

  it("reads what the shared CSV layer reads (lib/csv; refused or misread before): decimal commas with semicolons, epoch milliseconds as milliseconds", () => {
    const semi = parseStepTestCsv(file("t;mv;pv", rows(40, (k) => `${k},5;${k > 10 ? "45,5" : "40"};130,25`)), LOOP);
    expect(semi.rows[11]).toMatchObject({ t: 11, mv: 45.5, pv: 130.25 });
    // 1,790,000,000,000 ms + 500 ms per row: 0.5 s apart (read as seconds it was 500 s), with a warning
    const ms = parseStepTestCsv(file("t,mv,pv", rows(40, (k) => `${1_790_000_000_000 + 500 * k},40,130`)), LOOP);
    expect(ms.rows[3]!.t).toBe(1.5);
    expect(ms.warnings.join(" ")).toMatch(/read as milliseconds since 1970/);
  });

  it(`accepts exactly ${MIN_ROWS} rows`, () => {
    expect(parseStepTestCsv(file("t,mv,pv", rows(MIN_ROWS)), LOOP).rows).toHaveLength(MIN_ROWS);
  });
});

describe("parseStepTestCsv: refusals name the line and column", () => {
  it("bad header: a missing required column", () => {
    const loc = locationOf(() => parseStepTestCsv(file("t,mv,temperature", rows(40)), LOOP));
    expect(loc).toMatchObject({ row: 1, column: null, columnName: "pv" });
    expect(loc.message).toMatch(/lacks pv/);
    expect(loc.message).toMatch(/"temperature"/);
  });

  it("bad header: a column twice", () => {
    expect(locationOf(() => parseStepTestCsv(file("t,mv,pv,PV", rows(40)), LOOP))).toMatchObject({ row: 1, column: 4, columnName: "pv" });
  });

  it("bad header: an unknown time unit", () => {
    expect(locationOf(() => parseStepTestCsv(file("t [fortnight],mv,pv", rows(40)), LOOP))).toMatchObject({ row: 1, column: 1, columnName: "t" });
  });

  it("an empty file", () => {
    expect(locationOf(() => parseStepTestCsv("", LOOP))).toMatchObject({ row: 1, column: null });
  });

  it("a non-numeric cell: line and column of the cell", () => {
    const body = rows(40);
    body[6] = "6,45,hot"; // line 8 of the file (header is line 1)
    const loc = locationOf(() => parseStepTestCsv(file("t,mv,pv", body), LOOP));
    expect(loc).toMatchObject({ row: 8, column: 3, columnName: "pv" });
    expect(loc.message).toBe('Line 8, column 3 (pv): "hot" is not a number.');
  });

  it("a decimal comma in a comma-separated file gets a hint", () => {
    const body = rows(40);
    body[2] = '2,"40,5",130';
    const loc = locationOf(() => parseStepTestCsv(file("t,mv,pv", body), LOOP));
    expect(loc).toMatchObject({ row: 4, column: 2, columnName: "mv" });
    expect(loc.message).toMatch(/decimal separator/);
  });

  it("an empty cell and a short line", () => {
    const body = rows(40);
    body[0] = "0,,130";
    expect(locationOf(() => parseStepTestCsv(file("t,mv,pv", body), LOOP))).toMatchObject({ row: 2, column: 2, columnName: "mv" });
    const short = rows(40);
    short[4] = "4,40";
    expect(locationOf(() => parseStepTestCsv(file("t,mv,pv", short), LOOP))).toMatchObject({ row: 6, column: 3, columnName: "pv" });
  });

  it("time that does not increase (a repeat, then a step back)", () => {
    const dup = rows(40);
    dup[9] = "8,45,130"; // repeats t = 8 of line 10
    expect(locationOf(() => parseStepTestCsv(file("t,mv,pv", dup), LOOP))).toMatchObject({ row: 11, column: 1, columnName: "t" });
    const back = rows(40);
    back[20] = "3,45,130";
    const loc = locationOf(() => parseStepTestCsv(file("t,mv,pv", back), LOOP));
    expect(loc).toMatchObject({ row: 22, column: 1, columnName: "t" });
    expect(loc.message).toMatch(/does not increase/);
  });

  it("seconds mixed with date-times, and a date-time without a zone", () => {
    const mixed = rows(40);
    mixed[5] = "2026-11-03T08:00:05Z,40,130";
    expect(locationOf(() => parseStepTestCsv(file("t,mv,pv", mixed), LOOP))).toMatchObject({ row: 7, column: 1 });
    const local = rows(40, (k) => `2026-11-03T08:00:${String(k).padStart(2, "0")},40,130`);
    expect(locationOf(() => parseStepTestCsv(file("t,mv,pv", local), LOOP)).message).toMatch(/without a zone/);
    // Date.parse would roll 30 February into 2 March; the field-checked reader refuses it.
    const feb = rows(40, (k) => `2026-02-${k === 3 ? "30" : "27"}T08:00:${String(k).padStart(2, "0")}Z,40,130`);
    expect(locationOf(() => parseStepTestCsv(file("t,mv,pv", feb), LOOP))).toMatchObject({ row: 5, column: 1, message: expect.stringMatching(/no such date/) });
  });

  it("a mode that is not auto, manual or cascade", () => {
    const body = rows(40, (k) => `${k},40,130,${k === 12 ? "hand" : "manual"}`);
    expect(locationOf(() => parseStepTestCsv(file("t,mv,pv,mode", body), LOOP))).toMatchObject({ row: 14, column: 4, columnName: "mode" });
  });

  it(`too few rows (${MIN_ROWS - 1})`, () => {
    const loc = locationOf(() => parseStepTestCsv(file("t,mv,pv", rows(MIN_ROWS - 1)), LOOP));
    expect(loc.message).toMatch(new RegExp(`Only ${MIN_ROWS - 1} data rows; a step test needs at least ${MIN_ROWS}`));
  });

  it("too large: over 5 MB is a 413 before any parsing", () => {
    const big = "t,mv,pv\n" + "1,2,3\n".repeat(Math.ceil(MAX_CSV_BYTES / 6) + 10);
    expect(() => parseStepTestCsv(big, LOOP)).toThrow(StepTestTooLargeError);
    try {
      parseStepTestCsv(new TextEncoder().encode(big), LOOP);
    } catch (e) {
      expect((e as StepTestTooLargeError).status).toBe(413);
    }
  });

  it("unit checks: a PV in another unit than the loop's, an MV not in the loop's units", () => {
    expect(locationOf(() => parseStepTestCsv(file("t,mv,pv [K]", rows(40)), LOOP))).toMatchObject({ row: 1, column: 3, columnName: "pv" });
    expect(locationOf(() => parseStepTestCsv(file("t,mv [mA],pv", rows(40)), LOOP)).message).toMatch(/this loop's MV is in "%"/);
  });

  it("a value more than a span outside the loop's range reads as a unit mistake (common practice)", () => {
    const body = rows(40);
    body[3] = "3,40,403.15"; // 130 degC written in kelvin
    const loc = locationOf(() => parseStepTestCsv(file("t,mv,pv", body), LOOP));
    expect(loc).toMatchObject({ row: 5, column: 3, columnName: "pv" });
    expect(loc.message).toMatch(/check the units/);
    // Inside the range widened by one span: accepted, with a warning for values outside the range.
    const near = rows(40);
    near[3] = "3,40,185";
    expect(parseStepTestCsv(file("t,mv,pv", near), LOOP).warnings.join(" ")).toMatch(/1 PV value lies outside/);
  });
});
