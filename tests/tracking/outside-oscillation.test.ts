/**
 * A stable loop under a strong periodic load from outside (simulators/scenarios/outside-oscillation.json:
 * 40 s period, 4 % of MV span at the plant input, demo activity otherwise) must never be reported
 * unstable while `tracking`. The truth is the simulator's own closed-loop state matrix
 * (`trueClosedLoopPoles`, radius 0.95 for PIC-1202 and 0.94 for PIC-4202): both loops are stable,
 * so a tracked radius >= 1 or a Jury verdict "unstable" would be a false alarm for an operator.
 * Before a radius >= 1 whose own 95 % interval reaches back inside the circle was held as
 * "undecided near the rim" (`poor-fit`, server/tracking), seeds 1-3 read radii 1.005-1.41 while
 * tracking (their radius sd 2.5-3.7).
 */
import { describe, expect, it } from "vitest";
import { trueClosedLoopPoles } from "@/simulators/loop-sim";
import { startDemoRun } from "./demo-harness";

const TAGS = ["PIC-1202", "PIC-4202"];

describe("outside oscillation on a stable loop: no false unstable verdict while tracking", () => {
  for (const seed of [1, 2, 3, 4, 5]) {
    it(`seed ${seed}: every tracked radius < 1 and every Jury verdict stable over an hour`, async () => {
      const run = await startDemoRun({ scenario: "outside-oscillation", tags: TAGS, seed });
      const tracked = new Map<string, number>();
      const worst = new Map<string, number>();
      const unstable: string[] = [];
      run.advanceTo(3600, (t) => {
        for (const [tag, id] of run.ids) {
          const st = run.registry.get(id)!.current;
          if (st.trackerState !== "tracking") continue;
          tracked.set(tag, (tracked.get(tag) ?? 0) + 1);
          worst.set(tag, Math.max(worst.get(tag) ?? 0, st.spectralRadius ?? 0));
          if ((st.spectralRadius ?? 0) >= 1 || st.juryStable === false) unstable.push(`${tag} at ${t} s: radius ${st.spectralRadius}`);
        }
      });
      for (const tag of TAGS) {
        const truth = Math.max(...trueClosedLoopPoles(run.sims.get(tag)!).map((z) => Math.hypot(z.re, z.im)));
        expect(truth, `${tag}: the simulated loop is stable`).toBeLessThan(1);
        // the check must have something to judge: most of the hour in tracking
        expect(tracked.get(tag) ?? 0, `${tag}: seconds in tracking`).toBeGreaterThan(1800);
        expect(worst.get(tag) ?? 0, `${tag}: largest tracked radius`).toBeGreaterThan(0.9);
      }
      expect(unstable.slice(0, 5)).toEqual([]);
    }, 120_000);
  }
});
