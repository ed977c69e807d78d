/**
 * The sensitivity peak from routine data (loop-margin.ts, loop-margin-sign.ts), checked against
 * scipy (tests/reference/generate_loop_margin.py, fixture tests/reference/fixtures/loop-margin.json):
 * - sensitivityPeak of a known discrete process and PI equals scipy.signal.freqz's max |1/(1 + GC)|
 *   within 0.5 %, and the gain margin within 1 %, on first-order, level and second-order processes;
 * - the process identified in closed loop from PV and MV alone (the first-order loop of loop-sim.ts,
 *   slow load at PV, measurement noise, constant set point; its delay fixed at the configured dead
 *   time) gives Ms within 15 % of scipy's value for the true process, over 8 seeds, at the SIMC gain
 *   (Ms 1.70) and at 1.5 times it (Ms 2.42);
 * - the verdict: at 1.5 times the SIMC gain (Ms 2.42, gain margin 1.86) the loop's error shows no
 *   ringing the other rules read (healthy without a dead time, 8 of 8 seeds), and is now a possible
 *   aggressive finding (0.55, no work item) on at least 6 of 8 seeds (the 95 % lower bound of an Ms
 *   this close to 2 does not always clear it), otherwise healthy; at the SIMC gain healthy on 8 of 8;
 *   without a configured dead time nothing is computed.
 */
import { describe, expect, it } from "vitest";
import { assessLoop } from "@/lib/assessment";
import { MS_LIMIT, sensitivityPeak } from "@/lib/assessment/loop-margin";
import { discretePid } from "@/lib/control";
import { simulateLoop, simulatedLoopConfig } from "./loop-sim";
import { pythonHas, referenceFixture, staleReference } from "../helpers/python";

interface Case { what: string; b: number[]; f: number[]; nk: number; kp: number; ti: number; T: number; ms: number; gainMargin: number | null }
const fixture = referenceFixture<{ cases: Case[] }>("loop-margin.json");
const hasScipy = pythonHas("numpy, scipy");
const SEEDS = [1, 2, 3, 4, 5, 6, 7, 8];

/** The loop of loop-sim.ts: K 1, τ 20 s, T 1 s, dead time 4 s, Ti 20 s, a slow load at PV. */
function run(seed: number, kp: number, deadTimeS: number | null) {
  const samples = simulateLoop({ seed, n: 20_000, kp, ti: 20, tauS: 20, deadS: 4, noise: 0.1, loadPole: 0.999, loadSigma: 0.2 });
  const config = simulatedLoopConfig(kp, 20);
  config.deadTimeS = deadTimeS;
  return assessLoop(samples, config);
}

function caseOf(kp: number): Case {
  const c = fixture.cases.find((x) => x.what.startsWith("first order") && x.kp === kp);
  if (!c) throw new Error(`no fixture case at Kp ${kp}`);
  return c;
}

describe("sensitivity peak of a known loop (scipy.signal.freqz)", () => {
  it.skipIf(!hasScipy)("the fixture is what its generator gives", () => {
    expect(staleReference("generate_loop_margin.py", "loop-margin.json")).toBeNull();
  });

  it("Ms within 0.5 % and the gain margin within 1 % of scipy's", () => {
    expect(fixture.cases.length).toBe(6);
    for (const c of fixture.cases) {
      const pid = discretePid({ kp: c.kp, ti: c.ti, T: c.T });
      const got = sensitivityPeak(c.b, c.f, c.nk, pid.num, pid.den);
      expect(Math.abs(got.ms / c.ms - 1), c.what).toBeLessThan(0.005);
      expect(c.gainMargin).not.toBeNull();
      expect(Math.abs(got.gainMargin! / c.gainMargin! - 1), c.what).toBeLessThan(0.01);
    }
  });
});

describe("sensitivity peak from routine data (closed-loop prediction-error fit)", () => {
  it("is within 15 % of the true loop's Ms at the SIMC gain and at 1.5 times it", () => {
    for (const kp of [2, 3]) {
      const truth = caseOf(kp).ms;
      for (const seed of SEEDS) {
        const m = run(seed, kp, 4).details.loopMargin;
        // at the SIMC gain the verdict is healthy, so the figure is computed; at 1.5 times too (read healthy first)
        expect(m, `Kp ${kp} seed ${seed}`).toBeTruthy();
        expect(Math.abs(m!.ms / truth - 1), `Kp ${kp} seed ${seed}: ${m!.ms} against ${truth}`).toBeLessThan(0.15);
        expect(m!.msLower).toBeLessThanOrEqual(m!.ms);
      }
    }
  });

  it("turns a quiet loop with Ms above 2 into a possible aggressive finding, and leaves SIMC healthy", () => {
    expect(caseOf(3).ms).toBeGreaterThan(MS_LIMIT);
    expect(caseOf(2).ms).toBeLessThan(MS_LIMIT);
    let found = 0;
    for (const seed of SEEDS) {
      const hot = run(seed, 3, 4).diagnosis;
      if (hot.label === "aggressive-tuning") {
        found++;
        expect(hot.confidence).toBeLessThanOrEqual(0.6);
        expect(hot.evidence[0]).toContain("sensitivity peak");
      } else expect(hot.label, `seed ${seed}`).toBe("healthy");
      // the other rules read this loop healthy: without the dead time the figure is not computed
      const blind = run(seed, 3, null);
      expect(blind.details.loopMargin ?? null).toBeNull();
      expect(blind.diagnosis.label, `seed ${seed} without a dead time`).toBe("healthy");
      expect(run(seed, 2, 4).diagnosis.label, `seed ${seed} SIMC`).toBe("healthy");
    }
    // the lower bound of Ms (2.42 here) clears 2 at 95 % one-sided confidence on most seeds, not all
    expect(found).toBeGreaterThanOrEqual(6);
  });
});
