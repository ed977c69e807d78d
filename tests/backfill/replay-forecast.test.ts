import { describe, expect, it } from "vitest";
import { LoopTracker } from "@/server/tracking/loop-tracker";
import { piTuning, testLoopConfig } from "../helpers/loop-config";
import { FakeClock } from "../tracking/helpers";

/**
 * A backfill replays samples through a tracker that fits no forecast per state and fits the
 * forecast of the state going live at the end (server/tracking/trends.ts). The state that goes
 * live must equal the one of a tracker that saw the same samples live. Data: a first-order plant
 * with 3 samples of dead time under PI control whose gain creeps up, so the decay ratio and then
 * the radius drift and both forecasts occur (invented test data, deterministic).
 */
function drifting(n: number, t0: number) {
  let seed = 7;
  const noise = () => {
    seed ^= seed << 13;
    seed ^= seed >>> 17;
    seed ^= seed << 5;
    return (seed >>> 0) / 2 ** 32 - 0.5;
  };
  let y = 50;
  let integ = 40;
  const delay = [40, 40, 40];
  const out = [];
  for (let k = 0; k < n; k++) {
    const sp = [50, 56, 46, 53][Math.floor(k / 240) % 4]!;
    const e = sp - y;
    integ += (3 * e) / 12;
    const mv = Math.min(100, Math.max(0, 3 * e + integ + 0.4 * noise()));
    delay.push(mv);
    const gain = 1 + k / n; // the plant gain creeps: the loop loses damping
    y = 0.9 * y + 0.1 * gain * (delay.shift()! - 40) + 0.1 * 50 + 0.15 * noise();
    out.push({ t: t0 + k * 1000, sp, pv: y, mv, mode: "auto" as const });
  }
  return out;
}

describe("replaying tracker", () => {
  it("goes live with the forecast, state and checkpoint of a tracker that saw the same samples live", () => {
    const cfg = testLoopConfig({ na: 1, nb: 1, nk: 3, controller: piTuning(3, 12) });
    const samples = drifting(4 * 3600, Date.UTC(2026, 10, 1));
    const clockA = new FakeClock();
    const clockB = new FakeClock();
    const a = new LoopTracker(cfg, { clock: clockA, alarmDecayRatio: () => 0.35 });
    const b = new LoopTracker(cfg, { clock: clockB, alarmDecayRatio: () => 0.35 });
    b.setReplaying(true);
    let toRadiusOne = 0;
    let toLevel = 0;
    for (const s of samples) {
      clockA.t = s.t;
      clockB.t = s.t;
      const sa = a.push([{ ...s }], s.t);
      const sb = b.push([{ ...s }], s.t);
      if (sa?.forecast?.radiusOne) toRadiusOne++;
      if (sa?.forecast?.alarmLevel) toLevel++;
      if (sb) expect(sb.forecast).toBeNull(); // no fit while replaying
      if (s.t - samples[0]!.t > 3 * 3_600_000 && a.current.forecast?.radiusOne) break; // end where live shows a forecast
    }
    b.setReplaying(false);
    // the drift did make both forecasts live, and the last state carries one
    expect(toRadiusOne).toBeGreaterThan(0);
    expect(toLevel).toBeGreaterThan(0);
    expect(a.current.forecast?.radiusOne).toBeTruthy();
    expect(b.current).toEqual(a.current);
    const { loopId: _a, ...cpA } = a.checkpoint();
    const { loopId: _b, ...cpB } = b.checkpoint();
    expect(cpB).toEqual(cpA);
  });
});
