/**
 * Site period grouping (server/assessment/site-groups.ts, docs/assessment.md "Live use"): loops of
 * one site whose oscillation periods agree within ±5 % are grouped before one valve is blamed — a
 * "likely sticking valve" on such a loop becomes a shared oscillation (an outside-disturbance
 * candidate) with the group in its evidence. The ±5 % band is the issue's; the rest is ours.
 * Recordings: labelled DEV recordings of the benchmark generator (simulators/benchmark; the
 * sticking valve is the two-parameter model of Choudhury, Thornhill & Shah 2005).
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig, type LoopAssessmentReport } from "@/lib/assessment";
import type { SampleDto } from "@/lib/domain/types";
import { LiveAssessor, type LiveResult } from "@/server/assessment/assessor";
import { applySharedOscillation, periodsAgree, sharedOscillationOf, SHARED_CONFIDENCE, type PeriodPeer } from "@/server/assessment/site-groups";
import { benchmarkPlan, generateRecording } from "@/simulators/benchmark/generate";

const T0_MS = Date.UTC(2026, 11, 2, 6, 0, 0);

describe("periods agree within ±5 %", () => {
  it("is symmetric and bounded at 5 % of the shorter period", () => {
    expect(periodsAgree(40, 42)).toBe(true);
    expect(periodsAgree(42, 40)).toBe(true);
    expect(periodsAgree(40, 42.1)).toBe(false);
    expect(periodsAgree(42.1, 40)).toBe(false);
    expect(periodsAgree(40, 0)).toBe(false);
    expect(periodsAgree(Number.NaN, 40)).toBe(false);
  });
});

describe("the group of a loop", () => {
  const at = T0_MS + 3_600_000;
  const peer = (loopId: number, tag: string, siteId: number, periodS: number, ageS = 60, windowS = 3_600): PeriodPeer => ({ loopId, tag, siteId, periodS, at: at - ageS * 1000, windowS });
  const peers = [
    peer(2, "FIC-102", 1, 41), // same site, within 5 %
    peer(3, "TIC-103", 1, 39.5), // same site, within 5 %
    peer(4, "PIC-104", 1, 44), // same site, 10 % off
    peer(5, "FIC-201", 2, 40), // another site
    peer(6, "LIC-105", 1, 40, 7_300, 3_600), // same site and period, but two windows old
    peer(1, "FIC-101", 1, 40), // the loop itself
  ];

  it("lists the other loops of the site in the band, current ones only, by tag", () => {
    const g = sharedOscillationOf({ loopId: 1, siteId: 1, periodS: 40, at, windowS: 3_600 }, peers);
    expect(g).toEqual({ periodS: 40, loops: [{ loopId: 2, tag: "FIC-102", periodS: 41 }, { loopId: 3, tag: "TIC-103", periodS: 39.5 }] });
  });

  it("is null without an oscillation or without a peer", () => {
    expect(sharedOscillationOf({ loopId: 1, siteId: 1, periodS: null, at, windowS: 3_600 }, peers)).toBeNull();
    expect(sharedOscillationOf({ loopId: 1, siteId: 3, periodS: 40, at, windowS: 3_600 }, peers)).toBeNull();
    expect(sharedOscillationOf({ loopId: 1, siteId: 1, periodS: 60, at, windowS: 3_600 }, peers)).toBeNull();
  });
});

/** A DEV sticking-valve recording whose own assessment detects the oscillation and blames the valve. */
function stickingValveRecording(): { rec: ReturnType<typeof generateRecording>; report: LoopAssessmentReport } {
  for (const p of benchmarkPlan().filter((x) => x.label === "valve-stiction")) {
    const rec = generateRecording("dev", p.index);
    const report = assessLoop(rec.samples, parseLoopConfig(rec.config));
    if (report.oscillation.detected && report.diagnosis.label === "valve-stiction") return { rec, report };
  }
  throw new Error("no DEV sticking-valve recording with a detected oscillation");
}

describe("a sticking valve in a group of loops with its period", () => {
  const { rec, report } = stickingValveRecording();

  it("turns into a shared oscillation with the group in its evidence; the stiction figures stay", () => {
    const shared = { periodS: report.oscillation.periodS!, loops: [{ loopId: 9, tag: "FIC-109", periodS: report.oscillation.periodS! * 1.03 }] };
    const r = applySharedOscillation(report, shared);
    expect(r.diagnosis.label).toBe("external-disturbance");
    expect(r.diagnosis.confidence).toBeLessThanOrEqual(Math.min(report.diagnosis.confidence, SHARED_CONFIDENCE));
    expect(r.diagnosis.evidence[0]).toMatch(/^likely a shared oscillation: FIC-109 /);
    expect(r.diagnosis.evidence).toEqual(expect.arrayContaining(report.diagnosis.evidence));
    expect(r.stiction).toEqual(report.stiction);
    expect(r.sharedOscillation).toEqual(shared);
    // no group: the report as lib/assessment made it
    expect(applySharedOscillation(report, null)).toBe(report);
  });

  it("through the live assessor: the second loop of a site with the same cycle is grouped, the same cycle on another site is not", () => {
    const config = parseLoopConfig(rec.config);
    const results: LiveResult[] = [];
    const live = new LiveAssessor({ capacity: rec.samples.length, now: () => T0_MS + rec.samples.at(-1)!.t * 1000, onResult: (r) => results.push(r) });
    const tele: SampleDto[] = rec.samples.map((s) => ({ t: T0_MS + Math.round(s.t * 1000), sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode ?? "auto", ...(s.quality ? { quality: s.quality } : {}) }));
    live.upsertLoop({ loopId: 1, tenantId: 1, siteId: 10, config: { ...config, tag: "FIC-101" } });
    live.upsertLoop({ loopId: 2, tenantId: 1, siteId: 10, config: { ...config, tag: "FIC-102" } });
    live.upsertLoop({ loopId: 3, tenantId: 1, siteId: 20, config: { ...config, tag: "FIC-201" } });
    for (const id of [1, 2, 3]) live.push(id, tele);
    const first = live.assessNow(1)!;
    const second = live.assessNow(2)!;
    const other = live.assessNow(3)!;
    // the first loop had no peer yet; the second finds it; the third is on another site
    expect(first.report.diagnosis.label).toBe("valve-stiction");
    expect(second.report.diagnosis.label).toBe("external-disturbance");
    expect(second.report.sharedOscillation?.loops.map((l) => l.tag)).toEqual(["FIC-101"]);
    expect(other.report.diagnosis.label).toBe("valve-stiction");
    // the first loop's next run sees the second: both are grouped now
    const again = live.assessNow(1)!;
    expect(again.report.diagnosis.label).toBe("external-disturbance");
    expect(again.report.sharedOscillation?.loops.map((l) => l.tag)).toEqual(["FIC-102"]);
    expect(results).toHaveLength(4);
  });
});
