/**
 * One state, one set of figures: what the alarm conditions judge, what the API and the live
 * summary carry, and what the loop detail's analysis panel prints all come from the tracker's
 * assessment. The mode is invented: a lightly damped pair (ζ = 0.1, ωn·T = 0.3) beside a faster
 * pair of larger radius, so the largest-radius pair and the slowest-decaying one differ; the
 * decay ratio exp(-2πζ/√(1-ζ²)) = 0.5321 is the textbook relation (docs/domain.md §1; Franklin,
 * Powell & Workman, ch. 4).
 */
import { createElement } from "react";
import { renderToStaticMarkup } from "react-dom/server";
import { describe, expect, it } from "vitest";
import { evaluateConditions, newConditionMemory } from "@/lib/domain/alarms/conditions";
import { DEFAULT_POLICY } from "@/lib/domain/alarms/policy";
import { assessPoles } from "@/lib/domain/assessment";
import type { LoopStateDto, PoleDto } from "@/lib/domain/types";
import { toLoopBrief } from "@/server/realtime/summary";
import { AnalysisPanel } from "@/app/(console)/loops/[loopId]/_components/analysis-panel";

const T = 1;
const pole = (re: number, im: number): PoleDto => ({ re, im, radius: Math.hypot(re, im), sdRadius: null, cov: null });
const pair = (zeta: number, wnT: number): PoleDto[] => {
  const r = Math.exp(-zeta * wnT);
  const th = wnT * Math.sqrt(1 - zeta * zeta);
  return [pole(r * Math.cos(th), r * Math.sin(th)), pole(r * Math.cos(th), -r * Math.sin(th))];
};

function trackerState(poles: PoleDto[]): LoopStateDto {
  const at = Date.UTC(2026, 11, 2, 9, 0, 0);
  return {
    loopId: 5, tenantId: 1, at, receivedAt: at, trackerState: "tracking", stateReason: null, estimationPeriodS: T,
    samples: 4000, excitation: 1, fitPercent: 90, juryStable: true, rimUndecided: false, gainHeadroom: 2, forecast: null,
    modelPoles: poles, dataPoles: [], dataPolesKind: "disturbance-response", zeros: [], characteristic: null, delaySamples: 1, last: null,
    polesFrom: "model",
    ...assessPoles(poles, T),
  };
}

describe("alarms, API and page show the same figures for one state", () => {
  // slow pair: ζ = 0.1 at ωn·T = 0.3 (radius 0.9704); fast pair: ζ = 0.5 at ωn·T = 0.05 (radius 0.9753, decay ratio 0.027)
  const s = trackerState([...pair(0.1, 0.3), ...pair(0.5, 0.05)]);
  const expected = Math.exp((-2 * Math.PI * 0.1) / Math.sqrt(1 - 0.01));

  it("the assessment's decay ratio is the slowest-decaying mode's, not the largest-radius pair's", () => {
    expect(s.decayRatio).toBeCloseTo(expected, 10);
    expect(s.spectralRadius).toBeCloseTo(Math.exp(-0.5 * 0.05), 12);
    expect(s.oscillation!.zeta).toBeCloseTo(0.1, 10);
  });

  it("the margin alarm judges that figure", () => {
    const r = evaluateConditions(newConditionMemory(), s, { ...structuredClone(DEFAULT_POLICY), onDelayS: 0, confidenceSigmas: 0 }, {}, s.at);
    expect(r.verdicts.margin.value).toBe(s.decayRatio);
    expect(r.verdicts.margin.active).toBe(true); // 0.532 is above the default high level 0.5
    expect(r.verdicts.unstable.value).toBe(s.spectralRadius);
  });

  it("the API (the state as JSON) and the live summary carry it", () => {
    const api = JSON.parse(JSON.stringify(s)) as LoopStateDto;
    expect(api.decayRatio).toBe(s.decayRatio);
    const brief = toLoopBrief(s);
    expect(brief.decayRatio).toBe(Math.round(s.decayRatio! * 1e4) / 1e4);
    expect(brief.spectralRadius).toBe(Math.round(s.spectralRadius! * 1e4) / 1e4);
  });

  it("the loop detail's analysis panel prints it", () => {
    const html = renderToStaticMarkup(createElement(AnalysisPanel, { state: s, now: s.at }));
    const cell = (label: string) => new RegExp(`${label}</dt><dd[^>]*>([^<]*)<`).exec(html)?.[1];
    expect(cell("decay ratio")).toBe(s.decayRatio!.toFixed(3));
    expect(cell("rim distance")).toBe(s.rimDistance!.toFixed(4));
    // the decay ratio is the slowest-decaying oscillating mode's, printed with that mode (the
    // dominant pole above it may be real); without a complex pole the panel says there is none
    expect(s.oscillation).toBeTruthy();
    const mode = /data-testid="oscillating-mode">(.*?)<\/dl>/.exec(html)?.[1] ?? "";
    expect(mode).toContain(s.decayRatio!.toFixed(3));
    expect(mode).toContain(s.oscillation!.radius.toFixed(4));
    const none = renderToStaticMarkup(createElement(AnalysisPanel, { state: { ...s, oscillation: null, decayRatio: null }, now: s.at }));
    expect(none).toContain("None: no complex closed-loop pole");
    expect(none).not.toContain('data-testid="oscillating-mode"');
  });
});
