/**
 * The cross-check of a routine verdict against the tracked model (lib/assessment/model-check.ts,
 * docs/assessment.md "Cross-check with the tracked model"), on constructed assessments: routine
 * reports of simulated loops (tests/assessment/loop-sim.ts; invented data) beside model views
 * built through the one home of the loop figures (`assessPoles`, lib/domain/assessment.ts) from
 * chosen poles, or from the simulated loop's true closed loop (lib/control, itself checked against
 * scipy in tests/control). Quarter-amplitude damping (decay ratio 0.25, ζ ≈ 0.215) is the classic
 * tuning target (Ziegler & Nichols 1942; common practice).
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig, type LoopAssessmentReport } from "@/lib/assessment";
import { applyModelCheck, checkAgainstModel, MODEL_PERIOD_TOLERANCE, POORLY_DAMPED, QUARTER_AMPLITUDE, SLUGGISH_MULTIPLE, slowResponseOf, type ModelView } from "@/lib/assessment/model-check";
import { closedLoopPolynomial, discretePid, polyRoots } from "@/lib/control";
import type { Complex } from "@/lib/control/types";
import { assessPoles } from "@/lib/domain/assessment";
import { evaluateConditions, newConditionMemory } from "@/lib/domain/alarms/conditions";
import { DEFAULT_POLICY } from "@/lib/domain/alarms/policy";
import { opensWorkItem } from "@/lib/domain/findings";
import { LiveAssessor, type LiveResult } from "@/server/assessment/assessor";
import { loopState } from "../alarms/helpers";
import { flowLoopJson, simulateLoop } from "./loop-sim";

// The simulated plant of loop-sim.ts: K = 1, τ = 20 s, dead time 2 s, T = 1 s (ZOH: a = e^{-1/20},
// b = 1 - a, four samples of delay, as in tests/assessment/diagnosis.test.ts).
const A = Math.exp(-1 / 20);
const trueClosedLoop = (kp: number, ti: number): Complex[] => polyRoots(closedLoopPolynomial({ a: [-A], b: [1 - A], nk: 4, T: 1 }, discretePid({ kp, ti, T: 1 })));
const report = (kp: number, ti: number, extra: Record<string, unknown> = {}) =>
  assessLoop(simulateLoop({ seed: 1, n: 6000, kp, ti, ...extra }), parseLoopConfig(flowLoopJson("FIC-204", { deadTimeS: 3, controller: { kp, ti, mvLo: 0, mvHi: 100 } })));

/** A model view as the tracker publishes it, from poles (with their radius sd) at period T. */
function modelView(poles: (Complex & { sdRadius?: number | null })[], T = 1, over: Partial<ModelView> = {}): ModelView & ReturnType<typeof assessPoles> {
  return { trackerState: "tracking", polesFrom: "model", rimUndecided: false, estimationPeriodS: T, ...assessPoles(poles, T), ...over };
}

/** A complex pair of radius r whose per-cycle decay ratio is `dr` (θ = 2π ln r / ln dr). */
function pairWithDecay(r: number, dr: number, sdRadius: number | null = 0.002): (Complex & { sdRadius: number | null })[] {
  const theta = (2 * Math.PI * Math.log(r)) / Math.log(dr);
  return [1, -1].map((s) => ({ re: r * Math.cos(theta), im: s * r * Math.sin(theta), sdRadius }));
}

/** A complex pair of radius r with period `periodS` at T = 1 s. */
function pairWithPeriod(r: number, periodS: number): (Complex & { sdRadius: number | null })[] {
  const theta = (2 * Math.PI) / periodS;
  return [1, -1].map((s) => ({ re: r * Math.cos(theta), im: s * r * Math.sin(theta), sdRadius: 0.002 }));
}

const lastLine = (r: LoopAssessmentReport) => r.diagnosis.evidence.at(-1) ?? "";

describe("the thresholds", () => {
  it("quarter amplitude is ζ ≈ 0.215 and half amplitude ζ ≈ 0.11 (DR = exp(-2πζ/√(1-ζ²)); common practice)", () => {
    const quarter = modelView(pairWithDecay(0.95, QUARTER_AMPLITUDE)).oscillation!;
    expect(quarter.decayRatio).toBeCloseTo(0.25, 6);
    expect(quarter.zeta).toBeCloseTo(0.2155, 3);
    expect(modelView(pairWithDecay(0.95, POORLY_DAMPED)).oscillation!.zeta).toBeCloseTo(0.1097, 3);
  });
});

describe("period: routine cycle against the model's dominant pair", () => {
  const aggressive = report(5.5, 10);

  it("agrees with the simulated loop's true closed loop: an own-mode verdict gains confidence", () => {
    expect(aggressive.diagnosis.label).toBe("aggressive-tuning");
    const model = modelView(trueClosedLoop(5.5, 10));
    const check = checkAgainstModel(aggressive, model);
    expect(check.kind).toBe("agree");
    expect(check.model!.periodS).toBe(model.oscillation!.periodS);
    const out = applyModelCheck(aggressive, model);
    expect(out.diagnosis.label).toBe("aggressive-tuning");
    expect(out.diagnosis.confidence).toBeCloseTo(Math.min(0.95, aggressive.diagnosis.confidence + 0.1), 9);
    expect(lastLine(out)).toMatch(/agrees within ±20 % with the tracked model's dominant pair.*the loop's own mode/);
    expect(lastLine(out)).toContain(`period ${model.oscillation!.periodS.toFixed(1)} s`);
  });

  it("disagrees with a model pair of twice the period: the evidence says so and confidence drops", () => {
    const routineS = checkAgainstModel(aggressive, modelView(trueClosedLoop(5.5, 10))).routinePeriodS!;
    const out = applyModelCheck(aggressive, modelView(pairWithPeriod(0.9, 2 * routineS)));
    expect(out.modelCheck?.kind).toBe("disagree");
    expect(out.diagnosis.label).toBe("aggressive-tuning");
    expect(out.diagnosis.confidence).toBeCloseTo(Math.max(0.3, aggressive.diagnosis.confidence - 0.15), 9);
    expect(lastLine(out)).toMatch(/does not agree with the tracked model's dominant pair/);
  });

  it("the tolerance is ±20 % either way", () => {
    const routineS = checkAgainstModel(aggressive, modelView(trueClosedLoop(5.5, 10))).routinePeriodS!;
    expect(checkAgainstModel(aggressive, modelView(pairWithPeriod(0.9, routineS * (1 + MODEL_PERIOD_TOLERANCE - 0.01)))).kind).toBe("agree");
    expect(checkAgainstModel(aggressive, modelView(pairWithPeriod(0.9, routineS / (1 + MODEL_PERIOD_TOLERANCE - 0.01)))).kind).toBe("agree");
    expect(checkAgainstModel(aggressive, modelView(pairWithPeriod(0.9, routineS * (1 + MODEL_PERIOD_TOLERANCE + 0.01)))).kind).toBe("disagree");
    expect(checkAgainstModel(aggressive, modelView(pairWithPeriod(0.9, routineS / (1 + MODEL_PERIOD_TOLERANCE + 0.01)))).kind).toBe("disagree");
  });

  it("an outside sinusoid (150 s) beside the loop's own well-damped mode: not the loop's own mode", () => {
    const outside = report(0.5, 15, { sine: { amplitude: 2, periodS: 150 } });
    expect(outside.diagnosis.label).toBe("external-disturbance");
    const model = modelView(trueClosedLoop(0.5, 15));
    const out = applyModelCheck(outside, model);
    expect(out.modelCheck?.kind).toBe("disagree");
    expect(out.diagnosis.label).toBe("external-disturbance");
    expect(out.diagnosis.confidence).toBeGreaterThanOrEqual(outside.diagnosis.confidence);
    expect(lastLine(out)).toMatch(/differs from the tracked model's dominant pair.*not the loop's own mode/);
  });

  it("an outside-read cycle whose period a poorly damped model mode shares: a rival explanation, confidence lower, label kept", () => {
    const outside = report(0.5, 15, { sine: { amplitude: 2, periodS: 150 } });
    const periodS = outside.oscillation.periodS!;
    const theta = (2 * Math.PI) / periodS;
    const r = Math.pow(0.8, theta / (2 * Math.PI)); // decay ratio 0.8 at the cycle's period
    const out = applyModelCheck(outside, modelView([1, -1].map((s) => ({ re: r * Math.cos(theta), im: s * r * Math.sin(theta), sdRadius: 1e-4 }))));
    expect(out.modelCheck?.kind).toBe("agree");
    expect(out.diagnosis.label).toBe("external-disturbance");
    expect(out.diagnosis.confidence).toBeLessThan(outside.diagnosis.confidence);
    expect(lastLine(out)).toMatch(/may be the loop's own \(aggressive tuning\), or an outside cycle/);
  });
});

describe("damping: a quiet window beside a ringing model", () => {
  const healthy = report(2.9, 20);
  // PIC-1103 as seen in the demo: spectral radius 0.977, decay ratio 0.57
  const pic1103 = modelView(pairWithDecay(0.977, 0.57, 0.001));

  it("the routine data alone read healthy (SIMC tuning, Skogestad 2003)", () => {
    expect(healthy.diagnosis.label).toBe("healthy");
    expect(pic1103.spectralRadius).toBeCloseTo(0.977, 6);
    expect(pic1103.decayRatio).toBeCloseTo(0.57, 6);
  });

  it("decay ratio 0.57 (PIC-1103's): likely aggressive tuning, a work-list item, with the model's figures as evidence", () => {
    const out = applyModelCheck(healthy, pic1103);
    expect(out.modelCheck?.kind).toBe("poorly-damped");
    expect(out.diagnosis.label).toBe("aggressive-tuning");
    expect(opensWorkItem(out.diagnosis)).toBe(true);
    expect(out.diagnosis.evidence[0]).toMatch(/^likely aggressive tuning: the tracked model's dominant pair \(period [\d.]+ s, decay ratio 0\.5\d per cycle/);
    expect(out.diagnosis.evidence[0]).toContain("quarter amplitude, 0.25");
    expect(out.diagnosis.evidence.join("\n")).not.toMatch(/likely healthy/);
    // the routine figures stay as measured
    expect(out.oscillation).toEqual(healthy.oscillation);
    expect(out.harrisIndex).toBe(healthy.harrisIndex);
  });

  it("decay ratio 0.35 (between quarter and half amplitude): healthy kept, confidence below a work item's, with a line", () => {
    const out = applyModelCheck(healthy, modelView(pairWithDecay(0.97, 0.35)));
    expect(out.modelCheck?.kind).toBe("under-damped");
    expect(out.diagnosis.label).toBe("healthy");
    expect(out.diagnosis.confidence).toBeLessThan(healthy.diagnosis.confidence);
    expect(out.diagnosis.confidence).toBeLessThanOrEqual(0.45);
    expect(lastLine(out)).toMatch(/less damped than quarter amplitude/);
  });

  it("decay ratio 0.1: the report comes back unchanged", () => {
    expect(applyModelCheck(healthy, modelView(pairWithDecay(0.9, 0.1)))).toBe(healthy);
  });

  it("a poorly determined model (radius sd 0.05) does not overturn the verdict: judged one sd toward the origin", () => {
    const vague = modelView(pairWithDecay(0.977, 0.57, 0.05));
    expect(vague.decayRatio).toBeCloseTo(0.57, 6);
    expect(applyModelCheck(healthy, vague)).toBe(healthy);
  });

  it("sluggish routine data and a ringing model contradict each other: undetermined with the reason", () => {
    const sluggish = report(0.15, 100);
    expect(sluggish.diagnosis.label).toBe("sluggish-tuning");
    const out = applyModelCheck(sluggish, pic1103);
    expect(out.diagnosis.label).toBe("undetermined");
    expect(out.diagnosis.reason).toMatch(/sluggish while the tracked model rings/);
  });
});

describe("only a trusted model counts", () => {
  const healthy = report(2.9, 20);
  const ringing = pairWithDecay(0.99, 0.9, 0.001);
  it.each([
    ["learning", { trackerState: "learning" as const }],
    ["low excitation (model held)", { trackerState: "low-excitation" as const }],
    ["data-only poles", { polesFrom: "disturbance-response" as const }],
    ["undecided near the rim", { rimUndecided: true }],
  ])("%s: unchanged", (_name, over) => {
    expect(applyModelCheck(healthy, modelView(ringing, 1, over))).toBe(healthy);
  });
  it("no model, or a model without an oscillating pair: unchanged", () => {
    expect(applyModelCheck(healthy, null)).toBe(healthy);
    expect(applyModelCheck(healthy, modelView([{ re: 0.98, im: 0, sdRadius: 0.001 }]))).toBe(healthy);
  });
});

describe("speed: the tracked model's set-point response against the loop's baseline (sluggish tuning, a work-list finding)", () => {
  // The loop-sim plant under a sluggish PI (kp 0.15, ti 100 s) and under its SIMC tuning (kp 2.9,
  // ti 20 s, Skogestad 2003). The average residence time of a unit set-point step, Σ T (1 - y_k),
  // is the integrated error, Ti/(K·Kp) for any PI loop with a stable plant of gain K (common
  // practice; Åström & Hägglund, PID Controllers, 2nd ed., 1995 — from memory): 100/0.15 = 666.7 s
  // and 20/2.9 = 6.9 s. scipy.signal.dstep of the same closed loop (nk = 4, 20,000 steps) summed
  // gives 666.667 s and 6.897 s (python3-scipy, run once when this test was written).
  const BASELINE_S = 20;
  const closedLoopView = (kp: number, ti: number, over: Partial<ModelView> = {}) => {
    const poles = trueClosedLoop(kp, ti).map((p) => ({ re: p.re, im: p.im, radius: Math.hypot(p.re, p.im), sdRadius: 0, cov: null }));
    // closed-loop zero: the PI's, where N = kp[(1 + T/ti) - q^-1] vanishes (the plant adds none)
    const zeros = [{ re: 1 / (1 + 1 / ti), im: 0 }];
    return modelView(poles, 1, { modelPoles: poles, zeros, baselineTimeConstantS: BASELINE_S, ...over });
  };
  const healthy = report(2.9, 20);
  const sluggishRoutine = report(0.15, 100);

  it("the residence time of the sluggish loop's model is scipy's 666.7 s: 33× the 20 s baseline", () => {
    const slow = slowResponseOf(closedLoopView(0.15, 100))!;
    expect(slow.residenceS).toBeCloseTo(666.667, 1);
    expect(slow.ratio).toBeCloseTo(666.667 / BASELINE_S, 2);
    expect(slow.multiple).toBe(SLUGGISH_MULTIPLE);
    // the SIMC loop answers in 6.9 s: no finding
    expect(slowResponseOf(closedLoopView(2.9, 20))).toBeNull();
  });

  it("healthy routine data beside a slow model: likely sluggish tuning, a work-list item, with the figures as evidence", () => {
    expect(healthy.diagnosis.label).toBe("healthy");
    const out = applyModelCheck(healthy, closedLoopView(0.15, 100));
    expect(out.modelCheck?.kind).toBe("slow");
    expect(out.diagnosis.label).toBe("sluggish-tuning");
    expect(opensWorkItem(out.diagnosis)).toBe(true);
    expect(out.diagnosis.evidence[0]).toBe(
      "likely sluggish tuning: the tracked model's set-point response has an average residence time of 666.7 s, 33.3× the loop's baseline time constant 20.0 s (level 3×; poles one standard deviation toward the origin)",
    );
    expect(out.diagnosis.evidence.join("\n")).not.toMatch(/likely healthy/);
    // the routine figures stay as measured
    expect(out.oscillation).toEqual(healthy.oscillation);
    expect(out.harrisIndex).toBe(healthy.harrisIndex);
  });

  it("sluggish routine data and a slow model agree: confidence up by 0.1, the figures appended", () => {
    expect(sluggishRoutine.diagnosis.label).toBe("sluggish-tuning");
    const out = applyModelCheck(sluggishRoutine, closedLoopView(0.15, 100));
    expect(out.diagnosis.label).toBe("sluggish-tuning");
    expect(out.diagnosis.confidence).toBeCloseTo(Math.min(0.95, sluggishRoutine.diagnosis.confidence + 0.1), 9);
    expect(lastLine(out)).toMatch(/average residence time of 666\.7 s.*the model agrees with the routine data$/);
  });

  it("no finding without a baseline, below the tenant's multiple, from an untrusted model, or for a loop that answers in time", () => {
    expect(applyModelCheck(healthy, closedLoopView(0.15, 100, { baselineTimeConstantS: null }))).toBe(healthy);
    expect(applyModelCheck(healthy, closedLoopView(0.15, 100, { sluggishMultiple: 40 }))).toBe(healthy); // 33× < 40×
    expect(applyModelCheck(healthy, closedLoopView(0.15, 100, { sluggishMultiple: 30 })).diagnosis.label).toBe("sluggish-tuning");
    expect(applyModelCheck(healthy, closedLoopView(0.15, 100, { trackerState: "low-excitation" }))).toBe(healthy);
    expect(applyModelCheck(healthy, closedLoopView(0.15, 100, { rimUndecided: true }))).toBe(healthy);
    expect(applyModelCheck(healthy, closedLoopView(2.9, 20))).toBe(healthy);
  });

  it("a poorly determined slow pole does not make the verdict: judged one standard deviation toward the origin", () => {
    const vague = closedLoopView(0.15, 100);
    const shaky = { ...vague, modelPoles: vague.modelPoles!.map((p) => ({ ...p, sdRadius: 0.01 })) };
    expect(slowResponseOf(shaky)).toBeNull();
  });

  it("never an operator alarm: the same tracker state raises none of unstable, margin, rim-forecast", () => {
    const v = closedLoopView(0.15, 100);
    const s = loopState(7, 1, Date.UTC(2026, 0, 5), v.modelPoles!, { zeros: v.zeros! });
    const r = evaluateConditions(newConditionMemory(), s, { ...structuredClone(DEFAULT_POLICY), onDelayS: 0, advisoryOnDelayS: 0 }, {}, s.at);
    expect(Object.keys(r.verdicts).sort()).toEqual(["margin", "rim-forecast", "unstable"]);
    expect(Object.values(r.verdicts).some((x) => x.active)).toBe(false);
  });

  it("live: the assessor reads the loop's baseline and issues the finding the work list opens an item for", () => {
    const model = closedLoopView(0.15, 100, { baselineTimeConstantS: undefined });
    const results: LiveResult[] = [];
    const live = new LiveAssessor({ now: () => 0, modelOf: () => model, onResult: (r) => results.push(r) });
    const config = parseLoopConfig(flowLoopJson("FIC-204", { deadTimeS: 3, controller: { kp: 2.9, ti: 20, mvLo: 0, mvHi: 100 } }));
    live.upsertLoop({ loopId: 1, tenantId: 1, siteId: 1, config, baselineTimeConstantS: BASELINE_S });
    live.upsertLoop({ loopId: 2, tenantId: 1, siteId: 1, config, baselineTimeConstantS: null });
    const samples = simulateLoop({ seed: 1, n: 6000, kp: 2.9, ti: 20 }).map((x) => ({ t: x.t * 1000, sp: x.sp, pv: x.pv, mv: x.mv, mode: "auto" as const }));
    for (const id of [1, 2]) live.push(id, samples);
    const [withBaseline, without] = [live.assessNow(1)!, live.assessNow(2)!];
    expect(withBaseline.report.diagnosis.label).toBe("sluggish-tuning");
    expect(opensWorkItem(withBaseline.report.diagnosis)).toBe(true);
    expect(without.report.diagnosis.label).toBe("healthy");
  });
});
