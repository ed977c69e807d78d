import { describe, expect, it } from "vitest";
import { forecastCrossing } from "@/lib/control/forecast";
import { FigureTrend } from "@/lib/domain/trend";

/**
 * The trend reuses its last fit while no point was added (a state is computed per estimation
 * sample, a point only every `pointEveryS`): the answers must be those of a fit made afresh.
 * Data: a decay ratio rising 0.2 -> 0.5 over 2 h with a deterministic wiggle (invented test data).
 */
function fresh(points: { t: number; value: number }[], level: number, nowS: number, memoryS: number) {
  const span = points[points.length - 1]!.t - points[0]!.t;
  const f = forecastCrossing(points, level, { memory: memoryS, maxHorizon: span });
  if (!f || f.slope <= 0 || f.at < nowS) return null;
  return { at: f.at, low: f.low, high: f.high };
}

describe("FigureTrend.crossing", () => {
  it("gives the same answer as a fresh fit at every call, across added points, level changes and a reset", () => {
    const trend = new FigureTrend({ windowS: 7200, pointEveryS: 10, memoryS: 60 });
    const kept: { t: number; value: number }[] = [];
    let compared = 0;
    for (let t = 0; t <= 7200; t += 1) {
      const v = 0.2 + (0.3 * t) / 7200 + 0.01 * Math.sin(t / 37);
      const before = trend.length;
      trend.push(t, v);
      if (trend.length !== before || (kept.length && t >= kept[kept.length - 1]!.t + 10)) kept.push({ t, value: v });
      while (kept.length && kept[0]!.t < t - 7200) kept.shift();
      if (t % 7 !== 0 || kept.length < 3) continue;
      for (const level of [0.5, 0.6]) {
        expect(trend.crossing(level, t)).toEqual(fresh(kept, level, t, 60));
        compared++;
      }
    }
    expect(compared).toBeGreaterThan(1500);
    expect(trend.crossing(0.6, 7200)).not.toBeNull(); // the rising trend does forecast a crossing
    trend.reset();
    expect(trend.crossing(0.6, 7200)).toBeNull();
  });
});
