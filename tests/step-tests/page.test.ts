/**
 * The result view's markup (server-side render with react-dom/server; the uPlot chart draws only
 * in a browser): the identified numbers, the caution beside the apply form, the reason field an
 * engineer must fill, and no apply form for a viewer.
 */
import { createElement } from "react";
import { renderToStaticMarkup } from "react-dom/server";
import { describe, expect, it } from "vitest";
import { StepTestResultView } from "@/app/(console)/loops/[loopId]/step-tests/_components/step-test-result";
import { parseStepTestCsv } from "@/lib/step-tests/csv";
import { identifyStepTest } from "@/lib/step-tests/identify";
import type { StepTestDetail } from "@/lib/step-tests/service";
import { stepTestCsv } from "./simulate";

const result = identifyStepTest(
  parseStepTestCsv(
    stepTestCsv({ plant: { K: 1.2, tau: 8, L: 3 }, steps: [{ t: 20, du: 10 }, { t: 100, du: -10 }], mv0: 40, pv0: 50, T: 0.5, duration: 180, noiseStd: 0.05, mode: "manual" }),
  ),
  { telemetryPeriodS: 1, pvLo: 0, pvHi: 100, mvLo: 0, mvHi: 100 },
);
const detail: StepTestDetail = {
  id: 7,
  loopId: 3,
  filename: "fic-101-bump.csv",
  periodS: 0.5,
  rowCount: result.data.rows,
  createdAt: "2026-11-03T08:00:00.000Z",
  uploadedBy: 1,
  fitPercent: result.identification.fitPercent,
  gainPercent: result.continuous.gainPercent,
  timeConstantS: result.continuous.timeConstantS,
  deadTimeS: result.continuous.deadTimeS,
  proposedPeriodS: result.proposal!.estimationPeriodS,
  result,
  loop: { id: 3, tag: "FIC-101", units: "m3/h", mvUnits: "%", estimationPeriodS: 1, telemetryPeriodS: 1, na: 2, nb: 2, nk: 1 },
};
const loop = { tag: "FIC-101", units: "m3/h", mvUnits: "%", pvLo: 0, pvHi: 100, mvLo: 0, mvHi: 100 };
const render = (canApply: boolean) => renderToStaticMarkup(createElement(StepTestResultView, { loopId: 3, detail, loop, canApply, onApplied: () => {} }));

describe("step-test result view", () => {
  it("shows the identified gain with units, the download link and the proposal", () => {
    const html = render(true);
    expect(html).toContain(`${result.continuous.gain!.toFixed(3)} m3/h/%`);
    expect(html).toContain('href="/api/loops/3/step-tests/7/data"');
    expect(html).toContain("Proposal for the live tracker");
    expect(html).toContain(`${result.proposal!.modelStructure.na}, ${result.proposal!.modelStructure.nb}, ${result.proposal!.modelStructure.nk}`);
  });

  it("an engineer gets the apply form with a required reason and the caution beside it", () => {
    const html = render(true);
    expect(html).toMatch(/<textarea[^>]*required/);
    expect(html).toContain("Reason (required, kept in the change log)");
    expect(html).toContain("Rimguard never writes to a controller");
    expect(html).toContain("management of change");
    expect(html).toContain("Apply to the tracker");
  });

  it("a viewer sees the proposal but no apply form", () => {
    const html = render(false);
    expect(html).toContain("Proposal for the live tracker");
    expect(html).not.toContain("Apply to the tracker");
    expect(html).not.toContain("<textarea");
  });
});
