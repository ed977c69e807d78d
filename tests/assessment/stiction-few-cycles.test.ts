/**
 * Too few cycles for the stiction tests to decide (lib/assessment/stiction-few-cycles.ts).
 *
 * - The samples the model fit needs (its guards: six cycles and 200 blocks of a 24th of a cycle,
 *   lib/assessment/stiction-fit.ts) against the fit itself: null one sample short, a result at it.
 * - Half-cycles drawn at random as triangles or sinusoids (He, Wang, Pottmann & Qin 2007's two
 *   shapes; their index thresholds 0.6 / 0.4 from memory), 60 % triangles, over five cycles of
 *   400 samples, 20 seeds (invented data): where the index leans triangular (>= 0.6) but not
 *   beyond chance (t < 3, the shape test's own bar), the stiction verdict stays `undetermined`
 *   and says how long to wait; over 8.1 cycles (enough for the model fit) it never waits; a pure
 *   sinusoid never waits. Counts seen in brackets.
 * - The diagnosis turns such a wait into `undetermined` with `needsS` on a ringing loop (the
 *   rule's place in diagnosis.ts, after the findings a ringing loop can have).
 */
import { describe, expect, it } from "vitest";
import { diagnose } from "@/lib/assessment/diagnosis";
import { assessStiction, curveFitIndex } from "@/lib/assessment/stiction";
import { fitSamplesNeeded } from "@/lib/assessment/stiction-few-cycles";
import { fitStictionModel } from "@/lib/assessment/stiction-fit";
import { Prng } from "@/simulators/prng";
import { diagnosisInput } from "./diagnosis-input";

const P = 400;

/** MV: half-cycles of amplitude 2 % drawn as triangles with probability `triShare`, else sinusoids; PV: MV 100 samples later. */
function record(seed: number, n: number, triShare: number) {
  const rng = new Prng(seed);
  const tri = Array.from({ length: Math.ceil((2 * n) / P) }, () => rng.uniform(0, 1) < triShare);
  const mv = new Float64Array(n);
  const pv = new Float64Array(n);
  for (let t = 0; t < n; t++) {
    const ph = (t % P) / P;
    const shape = tri[Math.floor((2 * t) / P)] ? (ph < 0.5 ? 4 * ph - 1 : 3 - 4 * ph) : -Math.cos(2 * Math.PI * ph);
    mv[t] = 50 + 2 * shape + 0.05 * rng.normal();
  }
  for (let t = 0; t < n; t++) pv[t] = 50 + (t >= 100 ? mv[t - 100]! - 50 : 0) + 0.1 * rng.normal();
  return { mv, pv };
}

function stiction(seed: number, n: number, triShare: number) {
  const { mv, pv } = record(seed, n, triShare);
  const res = assessStiction({ pv, mv, include: new Uint8Array(n).fill(1), T: 1, periodS: P, oscillating: true, integrating: false, ti: 15, compressed: false, outsideOscillation: false, mvLimits: [0, 100] });
  return { res, shape: curveFitIndex(mv, P)! };
}

const SEEDS = Array.from({ length: 20 }, (_, i) => i + 1);

describe("stiction with too few cycles to decide", () => {
  it("the samples the model fit needs match the fit's own guards (null one sample short, a fit at the count)", () => {
    const rng = new Prng(5);
    for (const p of [8, 30, 100, 400, 1000]) {
      const needed = fitSamplesNeeded(p)!;
      const mv = Float64Array.from({ length: needed }, () => 50 + rng.normal());
      const pv = Float64Array.from({ length: needed }, () => 50 + rng.normal());
      expect(fitStictionModel(mv.subarray(1), pv.subarray(1), p), `P ${p}`).toBeNull();
      expect(fitStictionModel(mv, pv, p), `P ${p}`).not.toBeNull();
    }
    expect(fitSamplesNeeded(7)).toBeNull();
  });

  it("five cycles leaning triangular without significance: undetermined with the wait to 3,200 samples, on at least 8 of 20 seeds (12 seen), and only there", () => {
    const needed = fitSamplesNeeded(P)!;
    expect(needed).toBe(3200); // 200 blocks of 16 samples, more than six cycles (2,400)
    let waits = 0;
    for (const seed of SEEDS) {
      const { res, shape } = stiction(seed, 2000, 0.6);
      const leans = shape.index >= 0.6 && shape.tStat < 3;
      expect(res.needsS !== undefined, `seed ${seed}: index ${shape.index}, t ${shape.tStat}`).toBe(leans);
      if (res.needsS !== undefined) {
        waits++;
        expect(res.verdict).toBe("undetermined");
        expect(res.needsS).toBe(needed - 2000);
        expect(res.evidence.some((l) => l.startsWith("undetermined: the "))).toBe(true);
      }
    }
    expect(waits).toBeGreaterThanOrEqual(8);
  });

  it("with enough cycles for the model fit, or sinusoidal half-cycles, it never waits (20 seeds each)", () => {
    for (const seed of SEEDS) {
      expect(stiction(seed, 3250, 0.6).res.needsS, `seed ${seed}, 8.1 cycles`).toBeUndefined();
      expect(stiction(seed, 2000, 0).res.needsS, `seed ${seed}, sinusoid`).toBeUndefined();
    }
  });

  it("the diagnosis of a ringing loop with such a wait is undetermined with needsS, not healthy or aggressive", () => {
    const evidence = ["undetermined: the 9 half-cycles lean to a stick-slip shape, too few to be sure"];
    const d = diagnose(diagnosisInput({ ringDepth: -0.3, overshoot: 0.6, stiction: { verdict: "undetermined", evidence, curveFitIndex: 0.7, modelFitRatio: null, needsS: 1200 } }));
    expect(d.label).toBe("undetermined");
    expect(d.needsS).toBe(1200);
    expect(d.evidence).toEqual(evidence);
    // without the wait the same loop reads as aggressive (the ACF dip beyond -0.35)
    expect(diagnose(diagnosisInput({ ringDepth: -0.4, overshoot: 0.6, stiction: { verdict: "undetermined", evidence, curveFitIndex: 0.7, modelFitRatio: null } })).label).toBe("aggressive-tuning");
  });
});
