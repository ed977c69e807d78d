/**
 * The control room's area summaries: the headline radius of an area counts only loops whose
 * estimate is trusted (tracking, fresh data). A poor-fit or learning estimate can put a pole far
 * outside the unit circle (seen on the demo: a poor-fit loop at ρ 1.82 made its area read
 * "max ρ 1.820"); the tiles show such a figure muted, and the area's figure must not carry it.
 */
import { describe, expect, it } from "vitest";
import { summariseAreas } from "@/lib/client/areas";
import type { LiveLoopSummary, LoopStateDto, TrackerState } from "@/lib/domain/types";

const NOW = Date.UTC(2026, 11, 4, 9, 0, 0);

function loop(id: number, area: string, radius: number | null, trackerState: TrackerState, ageS = 0): LiveLoopSummary {
  const state = { spectralRadius: radius, trackerState, receivedAt: NOW - ageS * 1000, estimationPeriodS: 1 } as unknown as LoopStateDto;
  return {
    id, tenantId: 1, siteId: 1, siteName: "Hollin Quay", area, tag: `FIC-${id}`, slug: `fic-${id}`, description: "", kind: "flow",
    units: "m3/h", pvLo: 0, pvHi: 100, estimationPeriodS: 1, state, alarms: [],
  } as unknown as LiveLoopSummary;
}

describe("area summaries", () => {
  it("the worst radius counts tracking loops with fresh data only", () => {
    const areas = summariseAreas(
      [
        loop(1, "Intake", 0.93, "tracking"),
        loop(2, "Intake", 1.82, "poor-fit"),
        loop(3, "Intake", 1.2, "learning"),
        loop(4, "Clarifiers", 0.97, "tracking", 3600), // an hour without data: stale
        loop(5, "Clarifiers", 1.05, "low-excitation"),
      ],
      NOW,
    );
    const by = new Map(areas.map((a) => [a.name, a]));
    expect(by.get("Hollin Quay · Intake")!.worstRadius).toBe(0.93);
    expect(by.get("Hollin Quay · Intake")!.loops).toBe(3);
    expect(by.get("Hollin Quay · Clarifiers")!.worstRadius).toBeNull();
    expect(by.get("Hollin Quay · Clarifiers")!.stale).toBe(1);
  });

  it("a tracking loop outside the circle does count (that is an unstable estimate the operator must see)", () => {
    const [a] = summariseAreas([loop(1, "Intake", 0.93, "tracking"), loop(2, "Intake", 1.03, "tracking")], NOW);
    expect(a!.worstRadius).toBe(1.03);
  });
});
