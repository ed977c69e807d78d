/**
 * The stiction model fit (Jelali, J. Process Control 18, 2008, from memory; valve model of
 * Choudhury, Thornhill & Shah, Control Eng. Practice 13, 2005) over 20 seeds each, on loops of
 * tests/assessment/loop-sim.ts (invented data; its sticking valve is a separate, simplified
 * implementation of the same published model, so the fit is not checked against itself):
 * a sticking valve is found (a gain over a linear valve beyond what chance gives, from a valve
 * that slips like a stick-slip valve) and its band S recovered within 40 %; a linear loop ringing
 * from aggressive tuning and one under an outside sinusoid show no gain beyond chance. Thresholds
 * ours (stiction-fit.ts); the S recovery is what the method claims.
 */
import { describe, expect, it } from "vitest";
import { assessLoop } from "@/lib/assessment";
import { fitStictionModel, readStictionFit, type StictionFitReading } from "@/lib/assessment/stiction-fit";
import { simulatedLoopConfig, simulateLoop, type SimOptions } from "./loop-sim";

function fits(make: (seed: number) => SimOptions, periodS?: number, nested = false) {
  const out: { reading: StictionFitReading; S: number }[] = [];
  for (let seed = 1; seed <= 20; seed++) {
    const o = make(seed);
    const s = simulateLoop(o);
    const mv = Float64Array.from(s, (x) => x.mv);
    const pv = Float64Array.from(s, (x) => x.pv);
    const P = periodS ?? assessLoop(s, simulatedLoopConfig(o.kp, o.ti ?? null)).details.dominantPeriodS ?? 60;
    const f = fitStictionModel(mv, pv, P, nested);
    // no fit (too few cycles in the data) counts as no gain
    out.push({ reading: f ? readStictionFit(f) : "none", S: f?.bandPct ?? 0 });
  }
  return out;
}

describe("stiction model fit (20 seeds each)", () => {
  const found = (g: { reading: StictionFitReading }) => g.reading === "clear" || g.reading === "slight";
  it("a sticking valve (S = 4 %, J = 1 %) gives a gain beyond chance in at least 15 of 20 (16 seen, 9 of them clear), S within 40 % in most", () => {
    const got = fits((seed) => ({ seed, n: 6000, kp: 0.5, ti: 15, stiction: { S: 4, J: 1 }, sp0: 52 }));
    const gained = got.filter(found);
    expect(gained.length, JSON.stringify(got)).toBeGreaterThanOrEqual(15);
    expect(got.filter((g) => g.reading === "clear").length, JSON.stringify(got)).toBeGreaterThanOrEqual(7);
    const good = gained.filter((g) => Math.abs(g.S - 4) <= 1.6);
    expect(good.length, JSON.stringify(gained)).toBeGreaterThanOrEqual(14);
  });

  it("a sticking valve on an integrating (level) loop gives a gain beyond chance in at least 8 of 20 (9 seen: the fit is weaker on level loops, docs/assessment.md)", () => {
    const got = fits((seed) => ({ seed, n: 8000, kp: 2, ti: 200, integrating: true, tauS: 200, stiction: { S: 3, J: 1.5 }, sp0: 50 }));
    expect(got.filter(found).length, JSON.stringify(got)).toBeGreaterThanOrEqual(8);
  });

  it("a linear loop ringing from aggressive tuning shows no gain beyond chance in at least 19 of 20", () => {
    const got = fits((seed) => ({ seed, n: 6000, kp: 5.5, ti: 10 }));
    expect(got.filter((g) => g.reading === "none").length, JSON.stringify(got)).toBeGreaterThanOrEqual(19);
  });

  it("a linear loop under an outside sinusoid shows no gain beyond chance in at least 19 of 20", () => {
    const got = fits((seed) => ({ seed, n: 6000, kp: 0.5, ti: 15, sine: { amplitude: 2, periodS: 100 + 10 * seed } }));
    expect(got.filter((g) => g.reading === "none").length, JSON.stringify(got)).toBeGreaterThanOrEqual(19);
  });

  it("nested fit (the valve added to MV): a sticking valve gives a clear gain in at least 8 of 20 (10 seen, 7 more slight: the nested chance gain is larger); a linear loop ringing from aggressive tuning under random loads none that is clear in at least 19 of 20", () => {
    const stuck = fits((seed) => ({ seed, n: 6000, kp: 0.5, ti: 15, stiction: { S: 4, J: 1 }, sp0: 52 }), undefined, true);
    expect(stuck.filter((g) => g.reading === "clear").length, JSON.stringify(stuck)).toBeGreaterThanOrEqual(8);
    const linear = fits((seed) => ({ seed, n: 6000, kp: 5.5, ti: 10 }), undefined, true);
    expect(linear.filter((g) => g.reading !== "clear").length, JSON.stringify(linear)).toBeGreaterThanOrEqual(19);
  });
});
