/** Policy precedence and period equivalents; alarm KPIs on a fixture computed by hand. */
import { describe, expect, it } from "vitest";
import {
  dampingFromDecayRatio,
  decayRatioEquivalents,
  decayRatioFromDamping,
  parsePolicyOverride,
  policyEquivalents,
  resolvePolicy,
} from "@/lib/domain/alarms/policy";
import { computeAlarmKpis, type OccurrenceRecord } from "@/lib/domain/alarms/kpis";
import { ValidationError } from "@/lib/domain/errors";

describe("policy precedence: loop > site > tenant > defaults", () => {
  it("merges field by field", () => {
    const eff = resolvePolicy({
      tenant: { decayRatio: { low: 0.3, high: 0.45 }, onDelayS: 20, deadband: { decayRatio: 0.03 } },
      site: { onDelayS: 40, shelveMaxMinutes: 120 },
      loop: { shelveMaxMinutes: 60, radius: { low: 0.95, high: 0.98 } },
    });
    expect(eff.decayRatio).toEqual({ low: 0.3, high: 0.45 });
    expect(eff.onDelayS).toBe(40);
    expect(eff.shelveMaxMinutes).toBe(60);
    expect(eff.deadband.decayRatio).toBe(0.03);
    expect(eff.deadband.damping).toBe(0.01); // default kept
    expect(eff.radius).toEqual({ low: 0.95, high: 0.98 });
  });

  it("refuses radius levels at tenant or site scope (422), accepts them for a loop", () => {
    expect(() => parsePolicyOverride("tenant", { radius: { low: 0.9, high: 0.95 } })).toThrow(ValidationError);
    expect(() => parsePolicyOverride("site", { radius: { low: 0.9, high: 0.95 } })).toThrow(/one loop/);
    expect(parsePolicyOverride("loop", { radius: { low: 0.9, high: 0.95 } }).radius).toEqual({ low: 0.9, high: 0.95 });
  });

  it("rejects bad input with a message naming the field", () => {
    expect(() => parsePolicyOverride("tenant", { decayRatio: { low: 0.6, high: 0.5 } })).toThrow(/decayRatio.*high decay-ratio level/);
    expect(() => parsePolicyOverride("tenant", { onDelayS: -1 })).toThrow(/onDelayS/);
    expect(() => parsePolicyOverride("tenant", { colour: "red" })).toThrow(ValidationError);
  });
});

describe("period equivalents", () => {
  it("quarter-amplitude decay (0.25) is ζ ≈ 0.215 (common practice; docs/domain.md §1)", () => {
    expect(dampingFromDecayRatio(0.25)).toBeCloseTo(0.2155, 3);
    expect(decayRatioFromDamping(dampingFromDecayRatio(0.25))).toBeCloseTo(0.25, 12);
  });

  it("ρ = 0.98 is τ ≈ 5 s at T = 0.1 s and ≈ 250 s at T = 5 s (τ = -T/ln ρ)", () => {
    const eq = policyEquivalents({ ...resolvePolicy({ loop: { radius: { low: 0.97, high: 0.98 } } }) }, 0.1, null);
    const hi = eq.find((e) => e.source === "radius" && e.priority === "high")!;
    expect(hi.timeConstantS).toBeCloseTo(4.95, 2);
    const eq5 = policyEquivalents(resolvePolicy({ loop: { radius: { low: 0.97, high: 0.98 } } }), 5, null);
    expect(eq5.find((e) => e.source === "radius" && e.priority === "high")!.timeConstantS).toBeCloseTo(247.5, 1);
  });

  it("a decay ratio level gives the radius d^(T/P) for a mode of period P", () => {
    const { radius, timeConstantS, zeta } = decayRatioEquivalents(0.5, 2, 60);
    expect(Math.pow(radius!, 60 / 2)).toBeCloseTo(0.5, 12);
    expect(timeConstantS).toBeCloseTo(-60 / Math.log(0.5), 9);
    expect(zeta).toBeCloseTo(dampingFromDecayRatio(0.5), 12);
  });
});

describe("alarm KPIs (EEMUA 191, ANSI/ISA-18.2 figures)", () => {
  const MIN = 60_000;
  const from = Date.UTC(2026, 0, 5, 0, 0, 0);
  const to = from + 60 * MIN;
  const occ = (alarmId: number, areaId: number, atMs: number, priority: OccurrenceRecord["priority"] = "low", endedAt: number | null = atMs + 30_000): OccurrenceRecord => ({
    alarmId,
    loopId: 100 + alarmId,
    areaId,
    priority,
    startedAt: from + atMs,
    endedAt: endedAt == null ? null : from + endedAt,
  });
  const fixture: OccurrenceRecord[] = [
    // Area 1, interval 0 (00:00-00:10): alarm 1 three times in 50 s (chattering), alarm 2 once a minute from 1 to 9 min.
    occ(1, 1, 0), occ(1, 1, 20_000), occ(1, 1, 50_000),
    ...[1, 2, 3, 4, 5, 6, 7, 8, 9].map((m) => occ(2, 1, m * MIN)),
    // Area 1, interval 2: alarm 3 (low) at 25 min, alarm 4 (high) at 26 min.
    occ(3, 1, 25 * MIN), occ(4, 1, 26 * MIN, "high"),
    // Area 2, interval 3: alarm 5 (urgent) at 35 min.
    occ(5, 2, 35 * MIN, "urgent"),
    // Area 2, interval 5: alarms 10..17 once each, 30 s apart from 50 min.
    ...[10, 11, 12, 13, 14, 15, 16, 17].map((id, i) => occ(id, 2, 50 * MIN + i * 30_000)),
    // Area 2: alarm 6 active since 25 h before the window, still active (stale, not in the window count).
    occ(6, 2, -25 * 60 * MIN, "high", null),
    // Alarm 7 was active 30 h but ended before the window: not stale in this window.
    occ(7, 2, -40 * 60 * MIN, "low", -10 * 60 * MIN),
  ];
  /*
   * Hand computation. Window 60 min = 6 intervals of 10 min.
   * In-window occurrences: area 1 = 3 + 9 + 2 = 14; area 2 = 1 + 8 = 9; total 23.
   * Per-interval counts, all areas: [12, 0, 2, 1, 0, 8]; area 1: [12, 0, 2, 0, 0, 0]; area 2: [0, 0, 0, 1, 0, 8].
   * Average per 10 min: area 1 14/6 = 2.3333; area 2 9/6 = 1.5; overall 23/6 = 3.8333.
   * Peak: area 1 12, area 2 8, overall 12. Flood (> 10 in 10 min): one interval in area 1 and
   * overall = 1/6 = 16.667 % of the time; area 2 none.
   * Top ten points: alarm 2 (9), alarm 1 (3), then eight points with 1 each = 20 of 23 = 86.957 %.
   * Chattering: alarm 1 (3 in 50 s); alarm 2 is 60 s apart, so at most 1 in any 60 s window.
   * Stale: alarm 6, active 25 h + 1 h = 26 h at the end of the window.
   * Priority: low = 3 + 9 + 1 + 8 = 21 (91.304 %), high = 1 (4.348 %), urgent = 1 (4.348 %).
   */
  const k = computeAlarmKpis(fixture, from, to);

  it("alarm rate per 10 minutes per operator area, average and peak", () => {
    expect(k.intervals).toBe(6);
    expect(k.totalAlarms).toBe(23);
    const a1 = k.areas.find((a) => a.areaId === 1)!;
    const a2 = k.areas.find((a) => a.areaId === 2)!;
    expect(a1.alarms).toBe(14);
    expect(a1.averagePer10Min).toBeCloseTo(14 / 6, 12);
    expect(a1.peakPer10Min).toBe(12);
    expect(a2.averagePer10Min).toBeCloseTo(1.5, 12);
    expect(a2.peakPer10Min).toBe(8);
    expect(k.overall.averagePer10Min).toBeCloseTo(23 / 6, 12);
    expect(k.overall.peakPer10Min).toBe(12);
  });

  it("time in flood (more than 10 alarms in 10 minutes)", () => {
    expect(k.areas.find((a) => a.areaId === 1)!.percentTimeInFlood).toBeCloseTo(100 / 6, 9);
    expect(k.areas.find((a) => a.areaId === 2)!.percentTimeInFlood).toBe(0);
    expect(k.overall.floodIntervals).toBe(1);
  });

  it("share of the ten most frequent alarms", () => {
    expect(k.topTen).toHaveLength(10);
    expect(k.topTen[0]).toEqual({ alarmId: 2, loopId: 102, count: 9 });
    expect(k.topTen[1]).toEqual({ alarmId: 1, loopId: 101, count: 3 });
    expect(k.topTenSharePercent).toBeCloseTo((100 * 20) / 23, 9);
  });

  it("chattering (3 or more activations within 60 s) and stale (active over 24 h)", () => {
    expect(k.chattering).toEqual([{ alarmId: 1, loopId: 101, maxIn60s: 3 }]);
    expect(k.stale).toHaveLength(1);
    expect(k.stale[0]!.alarmId).toBe(6);
    expect(k.stale[0]!.activeHours).toBeCloseTo(26, 9);
  });

  it("priority distribution against 80/15/5", () => {
    expect(k.priority).toEqual([
      { priority: "low", count: 21, percent: (100 * 21) / 23, targetPercent: 80 },
      { priority: "high", count: 1, percent: 100 / 23, targetPercent: 15 },
      { priority: "urgent", count: 1, percent: 100 / 23, targetPercent: 5 },
    ]);
  });

  it("refuses an empty or reversed window", () => {
    expect(() => computeAlarmKpis([], to, from)).toThrow(RangeError);
  });
});
