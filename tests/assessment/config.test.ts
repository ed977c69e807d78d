/**
 * LOOP.json as other tools write it: numbers as strings, enum words in capitals, optional fields
 * left out (defaults taken, with a caution where they change the figures), impossible values
 * refused naming the field. And the data checks the command adds: values well outside the
 * configured ranges, a spacing far below the sample period.
 */
import { describe, expect, it } from "vitest";
import { LoopConfigError, parseLoopConfig } from "@/lib/assessment";
import { dataCautions, loopJsonCautions } from "@/lib/assessment/input-checks";

function issuesOf(value: unknown): string {
  try {
    parseLoopConfig(value);
  } catch (e) {
    if (e instanceof LoopConfigError) return e.issues.join("; ");
    throw e;
  }
  throw new Error("expected a LoopConfigError");
}

const base = { tag: "FIC-410", pvLo: 0, pvHi: 100, samplePeriodS: 1, controller: { kp: 0.5, ti: 20, action: "reverse", mvLo: 0, mvHi: 100 } };

describe("parseLoopConfig on loop files from other tools", () => {
  it("reads numbers written as strings with the values written", () => {
    const c = parseLoopConfig({ ...base, pvLo: "-5", pvHi: " 150.5 ", samplePeriodS: "0.5", deadTimeS: "2e0", controller: { kp: "1.5", ti: "20", td: "0", mvLo: "-2", mvHi: "102" } });
    expect([c.pvLo, c.pvHi, c.samplePeriodS, c.deadTimeS]).toEqual([-5, 150.5, 0.5, 2]);
    expect([c.controller.kp, c.controller.ti, c.controller.td, c.controller.mvLo, c.controller.mvHi]).toEqual([1.5, 20, 0, -2, 102]);
  });

  it("reads enum words in any letter case", () => {
    const c = parseLoopConfig({ ...base, kind: "Level", normalMode: "CASCADE", controller: { ...base.controller, action: "Direct", form: " Parallel", derivativeOn: "Error" } });
    expect([c.kind, c.normalMode, c.controller.action, c.controller.form, c.controller.derivativeOn]).toEqual(["level", "cascade", "direct", "parallel", "error"]);
  });

  it("takes the documented defaults for optional fields, with a caution for those that change the figures", () => {
    const minimal = { pvLo: 0, pvHi: 10, samplePeriodS: 2, controller: { kp: 1 } };
    const c = parseLoopConfig(minimal);
    expect(c.controller).toMatchObject({ ti: null, td: 0, action: "reverse", mvLo: 0, mvHi: 100 });
    expect(c.deadTimeS).toBeNull();
    expect(loopJsonCautions(minimal)).toEqual([
      "controller.ti not given: read as no integral action.",
      "controller.action not given: reverse acting assumed.",
      "controller.mvLo/mvHi not given: MV read in % (0 to 100).",
    ]);
    expect(loopJsonCautions(base)).toEqual([]);
  });

  const refused: [string, unknown, RegExp][] = [
    ["a decimal comma in a string", { ...base, pvHi: "1,5" }, /pvHi: .*expected number/],
    ["an empty string", { ...base, pvHi: "" }, /pvHi: .*expected number/],
    ["pvLo equal to pvHi", { ...base, pvHi: 0 }, /pvHi: pvHi must be greater than pvLo/],
    ["pvLo above pvHi", { ...base, pvLo: 120 }, /pvHi: pvHi must be greater than pvLo/],
    ["a sample period of 0", { ...base, samplePeriodS: 0 }, /samplePeriodS: must be > 0/],
    ["a negative sample period", { ...base, samplePeriodS: "-1" }, /samplePeriodS: must be > 0/],
    ["mvLo above mvHi", { ...base, controller: { ...base.controller, mvLo: 100, mvHi: 0 } }, /controller.mvHi: mvHi must be greater than mvLo/],
    ["a negative gain", { ...base, controller: { ...base.controller, kp: -1 } }, /controller.kp: must be >= 0/],
    ["an unknown action word", { ...base, controller: { ...base.controller, action: "inverse" } }, /controller.action/],
    ["no controller", { pvLo: 0, pvHi: 1, samplePeriodS: 1 }, /controller: /],
  ];
  for (const [name, value, message] of refused) {
    it(`refuses ${name}, naming the field`, () => {
      expect(issuesOf(value)).toMatch(message);
    });
  }
});

describe("dataCautions", () => {
  const config = parseLoopConfig(base);
  const at = (t: number, pv: number, mv: number) => ({ t, sp: 50, pv, mv });

  it("says nothing for data inside the ranges (MV a little past its limits is normal)", () => {
    expect(dataCautions([at(0, 0, -5), at(1, 100, 105), at(2, 50, 50)], config)).toEqual([]);
  });

  it("names MV well outside mvLo..mvHi (raw counts or engineering units)", () => {
    expect(dataCautions([at(0, 50, 0), at(1, 50, 4095)], config).join(" ")).toMatch(/MV runs from 0 to 4095, well outside mvLo..mvHi \(0..100\)/);
  });

  it("names an MV that stays within 0..1 of a 0..100 % range (an output written as a fraction), and not an MV in %", () => {
    expect(dataCautions([at(0, 50, 0.31), at(1, 50, 0.62)], config).join(" ")).toMatch(/MV stays between 0.31 and 0.62 of a 0..100 range: if it is written as a fraction/);
    expect(dataCautions([at(0, 50, 31), at(1, 50, 62)], config)).toEqual([]);
  });

  it("names PV well outside pvLo..pvHi", () => {
    expect(dataCautions([at(0, 350, 50), at(1, 351, 50)], config).join(" ")).toMatch(/PV\/SP run from 50 to 351, well outside pvLo..pvHi \(0..100\)/);
  });

  it("names a spacing far below the sample period (a time column in days or hours read as seconds)", () => {
    const day = 1 / 86_400;
    expect(dataCautions([at(46_000, 50, 50), at(46_000 + day, 50, 50), at(46_000 + 2 * day, 50, 50)], config).join(" ")).toMatch(/check the unit of the time column/);
  });

  it("says when such times look like a spreadsheet's serial days (days since 1899-12-30; 46,000 is in 2025), and only then", () => {
    const day = 1 / 86_400;
    const serial = dataCautions([at(46_000, 50, 50), at(46_000 + day, 50, 50), at(46_000 + 2 * day, 50, 50)], config).join(" ");
    expect(serial).toMatch(/look like a spreadsheet's serial days, 1 s apart if read so: write "t \[d\]" in the header/);
    const ms = 0.001;
    expect(dataCautions([at(0, 50, 50), at(ms, 50, 50), at(2 * ms, 50, 50)], config).join(" ")).not.toMatch(/serial days/);
  });
});
