/**
 * The stiction model fit (Jelali, J. Process Control 18, 2008, from memory; valve model of
 * Choudhury, Thornhill & Shah, Control Eng. Practice 13, 2005) over 20 seeds each, on loops of
 * tests/assessment/loop-sim.ts (invented data; its sticking valve is a separate, simplified
 * implementation of the same published model, so the fit is not checked against itself):
 * a sticking valve is found (a gain over a linear valve beyond what chance gives, from a valve
 * that slips like a stick-slip valve) and its band S recovered within 40 %; a linear loop ringing
 * from aggressive tuning and one under an outside sinusoid show no gain beyond chance, also under
 * five times the measurement noise (where the clear floor applies to the residual less its white
 * noise). Thresholds ours (stiction-fit.ts); the S recovery is what the method claims.
 */
import { describe, expect, it } from "vitest";
import { assessLoop } from "@/lib/assessment";
import { fitStictionModel, readStictionFit, type StictionFitReading } from "@/lib/assessment/stiction-fit";
import { simulatedLoopConfig, simulateLoop, type SimOptions } from "./loop-sim";

function fits(make: (seed: number) => SimOptions, periodS?: number, nested = false) {
  const out: { reading: StictionFitReading; S: number; noiseShare: number }[] = [];
  for (let seed = 1; seed <= 20; seed++) {
    const o = make(seed);
    const s = simulateLoop(o);
    const mv = Float64Array.from(s, (x) => x.mv);
    const pv = Float64Array.from(s, (x) => x.pv);
    const P = periodS ?? assessLoop(s, simulatedLoopConfig(o.kp, o.ti ?? null)).details.dominantPeriodS ?? 60;
    const f = fitStictionModel(mv, pv, P, nested);
    // no fit (too few cycles in the data) counts as no gain
    out.push({ reading: f ? readStictionFit(f) : "none", S: f?.bandPct ?? 0, noiseShare: f?.noiseShare ?? 0 });
  }
  return out;
}

describe("stiction model fit (20 seeds each)", () => {
  const found = (g: { reading: StictionFitReading }) => g.reading === "clear" || g.reading === "slight";
  it("a sticking valve (S = 4 %, J = 1 %) gives a gain beyond chance in at least 15 of 20 (16 seen, 12 of them clear), S within 40 % in most", () => {
    const got = fits((seed) => ({ seed, n: 6000, kp: 0.5, ti: 15, stiction: { S: 4, J: 1 }, sp0: 52 }));
    const gained = got.filter(found);
    expect(gained.length, JSON.stringify(got)).toBeGreaterThanOrEqual(15);
    expect(got.filter((g) => g.reading === "clear").length, JSON.stringify(got)).toBeGreaterThanOrEqual(7);
    const good = gained.filter((g) => Math.abs(g.S - 4) <= 1.6);
    expect(good.length, JSON.stringify(gained)).toBeGreaterThanOrEqual(14);
  });

  it("refined search: a sticking valve (S = 4 %, J = 1 %) reads clear in at least 10 of 20 (12 seen, 9 on the coarse grid alone) and its S within 20 % in at least 12 of those with a gain (13 of 16 seen, 11 on the grid alone)", () => {
    // The method's claim (Jelali 2008, from memory) is that the fit estimates S; 20 % is ours.
    const got = fits((seed) => ({ seed, n: 6000, kp: 0.5, ti: 15, stiction: { S: 4, J: 1 }, sp0: 52 }));
    expect(got.filter((g) => g.reading === "clear").length, JSON.stringify(got)).toBeGreaterThanOrEqual(10);
    const gained = got.filter(found);
    expect(gained.filter((g) => Math.abs(g.S - 4) <= 0.8).length, JSON.stringify(gained)).toBeGreaterThanOrEqual(12);
  });

  it("measurement noise (sd 0.5 % against 0.1 %): the noise share of the linear residual is estimated (0.05-0.5 on every seed), and a sticking valve still reads clear in at least 12 of 20 (13 seen)", () => {
    const got = fits((seed) => ({ seed, n: 6000, kp: 0.5, ti: 15, stiction: { S: 4, J: 1 }, sp0: 52, noise: 0.5 }));
    for (const g of got) expect(g.noiseShare, JSON.stringify(got)).toBeGreaterThanOrEqual(0.05);
    for (const g of got) expect(g.noiseShare, JSON.stringify(got)).toBeLessThanOrEqual(0.5);
    expect(got.filter((g) => g.reading === "clear").length, JSON.stringify(got)).toBeGreaterThanOrEqual(12);
  });

  it("measurement noise: a linear loop under an outside sinusoid (noise sd 0.5 %, 20,000 samples) never reads clear in 20 seeds (at most slight: a band filters MV's noise), nor one ringing from aggressive tuning", () => {
    const sine = fits((seed) => ({ seed, n: 20000, kp: 0.5, ti: 15, noise: 0.5, sine: { amplitude: 2, periodS: 100 + 10 * seed } }));
    expect(sine.filter((g) => g.reading === "clear"), JSON.stringify(sine)).toEqual([]);
    const aggr = fits((seed) => ({ seed, n: 6000, kp: 5.5, ti: 10, noise: 0.5 }));
    expect(aggr.filter((g) => g.reading === "clear"), JSON.stringify(aggr)).toEqual([]);
  });

  it("a sticking valve on an integrating (level) loop gives a gain beyond chance in at least 8 of 20 (9 seen, 3 of them clear: the fit is weaker on level loops, docs/assessment.md)", () => {
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
