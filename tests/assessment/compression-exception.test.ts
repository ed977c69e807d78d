/**
 * Exports of points stored by exception, each with its own time (a historian's "raw values"
 * export of dead-band storage; common practice in historians): replayed on the loop's grid, the
 * points between stored ones are interpolated, which fakes stick-slip shapes and lowers
 * variances (Thornhill, Choudhury & Shah, J. Process Control 14, 2004, from memory), so they
 * must read as compressed, as an export the historian interpolated itself already does
 * (diagnosis.test.ts). Loops from tests/assessment/loop-sim.ts (invented data), ten seeds each.
 */
import { describe, expect, it } from "vitest";
import { assessLoop, buildWindow, parseLoopConfig, type AssessSample } from "@/lib/assessment";
import { flowLoopJson, simulateLoop, storeByException } from "./loop-sim";
import { Prng } from "@/simulators/prng";

const config = () => parseLoopConfig(flowLoopJson("FIC-204"));
const stickingValve = (seed: number) => simulateLoop({ seed, n: 6000, kp: 0.5, ti: 15, stiction: { S: 4, J: 1 }, sp0: 52 });

/**
 * Share of grid times (t0 + iT) farther than T/2 from every stored time, a direct count by nearest
 * neighbour, among those not inside a gap (stored points more than max(10 T, 60 s) apart are not
 * bridged: window.ts).
 */
function madeUpShare(stored: readonly AssessSample[], T: number): number {
  const times = stored.map((s) => s.t);
  const t0 = times[0]!;
  const n = Math.floor((times[times.length - 1]! - t0) / T + 1e-9) + 1;
  let made = 0;
  let bridged = 0;
  let j = 0;
  for (let i = 0; i < n; i++) {
    const t = t0 + i * T;
    while (j + 1 < times.length && times[j + 1]! <= t) j++;
    if (j + 1 < times.length && times[j + 1]! - times[j]! > Math.max(10 * T, 60)) continue;
    bridged++;
    const near = Math.min(Math.abs(t - times[j]!), j + 1 < times.length ? Math.abs(times[j + 1]! - t) : Infinity);
    if (near > T / 2 + 1e-9) made++;
  }
  return made / bridged;
}

describe("exports of points stored by exception (own times)", () => {
  it("the window's interpolated share is the share of grid times more than half a period from every stored point", () => {
    for (let seed = 1; seed <= 5; seed++) {
      const stored = storeByException(stickingValve(seed), 0.25, 0.5);
      const w = buildWindow(stored, config());
      expect(w.interpolatedShare).toBeCloseTo(madeUpShare(stored, w.T), 12);
      expect(w.interpolatedShare).toBeGreaterThan(0.3);
    }
  });

  it("a complete export has none; one with a tenth of its rows missing stays under the compression limit", () => {
    const rng = new Prng(7);
    for (let seed = 1; seed <= 5; seed++) {
      const all = stickingValve(seed);
      expect(buildWindow(all, config()).interpolatedShare).toBe(0);
      const thinned = all.filter((_, i) => i === 0 || i === all.length - 1 || rng.uniform(0, 1) > 0.1);
      const r = assessLoop(thinned, config());
      expect(r.details.compression.interpolatedShare).toBeGreaterThan(0.05);
      expect(r.details.compression.interpolatedShare).toBeLessThan(0.15);
      expect(r.details.compression.compressed).toBe(false);
    }
  });

  it("a sticking valve stored by exception reads compressed: stiction and Harris withheld, never a likely sticking valve (10 seeds)", () => {
    for (let seed = 1; seed <= 10; seed++) {
      const raw = stickingValve(seed);
      const stored = storeByException(raw, 0.25, 0.5);
      expect(stored.length).toBeLessThan(0.7 * raw.length);
      const r = assessLoop(stored, config());
      expect(r.details.compression.compressed, `seed ${seed}`).toBe(true);
      expect(r.details.compression.reasons.join(" ")).toMatch(/stored by exception/);
      expect(r.harrisIndex).toBeNull();
      expect(r.stiction.verdict).toBe("undetermined");
      expect(r.diagnosis.label).not.toBe("valve-stiction");
      expect(r.cautions.join(" ")).toMatch(/compressed/);
    }
  });

  it("a sustained cycle on a compressed export is at most a possible outside cycle, naming the sticking valve it cannot exclude", () => {
    let sustained = 0;
    for (let seed = 1; seed <= 10; seed++) {
      const r = assessLoop(storeByException(stickingValve(seed), 0.25, 0.5), config());
      if (r.diagnosis.label !== "external-disturbance") continue;
      sustained++;
      expect(r.diagnosis.confidence).toBeLessThanOrEqual(0.5);
      expect(r.diagnosis.evidence[0]).toMatch(/sticking valve's cycle does not decay either/);
    }
    expect(sustained).toBeGreaterThan(0);
  });

  it("a fixed-interval export at a coarser period than the loop's is sampled, not compressed; the same spacing at irregular times is (10 seeds)", () => {
    const rng = new Prng(11);
    let stiction = 0;
    for (let seed = 1; seed <= 10; seed++) {
      const raw = stickingValve(seed);
      const snapshots = raw.filter((_, i) => i % 4 === 0);
      const r = assessLoop(snapshots, config());
      expect(r.details.compression.compressed, `seed ${seed}`).toBe(false);
      expect(r.details.compression.spacingRatio).toBeCloseTo(4, 9);
      expect(r.cautions.join(" ")).toMatch(/4\.0× the loop's sample period apart; fast dynamics are not seen/);
      expect(r.harrisIndex).not.toBeNull();
      if (r.diagnosis.label === "valve-stiction") stiction++;
      // the same mean spacing, drawn from 1 to 7 samples: stored at irregular times
      const irregular: AssessSample[] = [];
      for (let i = 0; i < raw.length; i += 1 + Math.floor(rng.uniform(0, 7))) irregular.push(raw[i]!);
      const q = assessLoop(irregular, config());
      expect(q.details.compression.compressed, `seed ${seed}`).toBe(true);
      expect(q.harrisIndex).toBeNull();
    }
    expect(stiction).toBeGreaterThanOrEqual(6);
  });
});

