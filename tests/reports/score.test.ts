/**
 * The worst-loops score's Harris term and the report's wording of a diagnosis.
 *
 * The Harris index as the assessment reports it is σ²_e / σ²_mv ("variance 4× the minimum the dead
 * time allows", ≥ 1 up to sampling error; lib/assessment/harris.ts). Desborough & Harris (1992)
 * state the same comparison as the performance index η = σ²_mv / σ²_e in 0..1, 1 at minimum
 * variance; the two are reciprocals (common practice: the literature quotes it both ways). The
 * score's benchmark η_kind is on the η scale (lib/reports/score.ts), so a loop at 4× minimum
 * variance has η = 0.25. The score formula and its weights are ours, printed on the report; the
 * expected scores below are that formula worked by hand.
 */
import { describe, expect, it } from "vitest";
import { harrisEta, scoreLoop, type PeriodFigures } from "@/lib/reports/score";
import { diagnosisCell } from "@/lib/reports/worst-loops-document";

const quiet: PeriodFigures = {
  minutes: 1440,
  radiusMax: null,
  decayRatioMax: null,
  decayRatioMean: null,
  unstableShare: null,
  alarmShare: 0,
  manualShare: 0,
  saturationShare: 0,
  serviceFactor: 1,
  diagnosisLabel: "healthy",
  diagnosisConfidence: 0.7,
  oscillationIndex: 0,
  stictionLikelihood: 0,
  harrisIndex: null,
};

describe("the Harris term of the worst-loops score", () => {
  it("reads the assessment's index as η = 1 / index (Desborough & Harris 1992)", () => {
    expect(harrisEta(4)).toBeCloseTo(0.25, 12);
    expect(harrisEta(1)).toBe(1);
    // below 1 is sampling error of a loop at minimum variance: η is capped at 1
    expect(harrisEta(0.8)).toBe(1);
    expect(harrisEta(null)).toBeNull();
    expect(harrisEta(0)).toBeNull();
  });

  it("a flow loop at 4x minimum variance scores half its Harris weight; at 1.5x nothing (η_kind 0.5)", () => {
    // term = 1 - 0.25/0.5 = 0.5; score = 100 * (3/3) * 0.10 * 0.5 = 5.0 (worked by hand)
    const slow = scoreLoop({ ...quiet, harrisIndex: 4 }, "flow", 3);
    expect(slow.terms.harris).toBeCloseTo(0.5, 12);
    expect(slow.score).toBe(5);
    expect(slow.evidence[0]).toMatch(/^variance 4\.0× the minimum the dead time allows \(Harris index; eta 0\.25 against 0\.5 for a flow loop\)$/);
    // η = 1/1.5 = 0.67 above the benchmark: no contribution
    const fine = scoreLoop({ ...quiet, harrisIndex: 1.5 }, "flow", 3);
    expect(fine.terms.harris).toBe(0);
    expect(fine.score).toBe(0);
    expect(slow.score).toBeGreaterThan(fine.score);
  });

  it("a level loop is judged against its own low benchmark (η_kind 0.1): 4x is fine, 20x counts half", () => {
    expect(scoreLoop({ ...quiet, harrisIndex: 4 }, "level", 3).terms.harris).toBe(0);
    // η = 0.05; term = 1 - 0.05/0.1 = 0.5; criticality 5 weighs 5/3: 100 * 5/3 * 0.05 = 8.3 (rounded to 0.1)
    const r = scoreLoop({ ...quiet, harrisIndex: 20 }, "level", 5);
    expect(r.terms.harris).toBeCloseTo(0.5, 12);
    expect(r.score).toBe(8.3);
  });

  it("without an index (no dead time configured, or not judged) the term is missing and counts 0", () => {
    const r = scoreLoop(quiet, "flow", 3);
    expect(r.missing).toContain("harris");
    expect(r.terms.harris).toBe(0);
  });
});

describe("the finding term: the ranking follows the routine-data findings", () => {
  it("a finding that opens a work item counts its confidence at weight 0.15; one too unsure for a work item counts 0; a loop not judged yet is missing", () => {
    // 100 * (3/3) * 0.15 * 0.9 = 13.5 (worked by hand)
    const stuck = scoreLoop({ ...quiet, diagnosisLabel: "valve-stiction", diagnosisConfidence: 0.9 }, "flow", 3);
    expect(stuck.terms.finding).toBeCloseTo(0.9, 12);
    expect(stuck.score).toBe(13.5);
    expect(stuck.evidence[0]).toBe("finding: likely sticking valve (confidence 0.90)");
    const unsure = scoreLoop({ ...quiet, diagnosisLabel: "aggressive-tuning", diagnosisConfidence: 0.55 }, "flow", 3);
    expect(unsure.terms.finding).toBe(0);
    expect(unsure.missing).not.toContain("finding");
    expect(scoreLoop(quiet, "flow", 3).terms.finding).toBe(0); // healthy
    const notYet = scoreLoop({ ...quiet, diagnosisLabel: "undetermined", diagnosisConfidence: null }, "flow", 3);
    expect(notYet.missing).toContain("finding");
    expect(stuck.score).toBeGreaterThan(unsure.score);
  });
});

describe("the report's diagnosis cell", () => {
  it("words a finding as the console does, with its confidence", () => {
    expect(diagnosisCell("valve-stiction", 0.9)).toBe("likely sticking valve (0.90)");
    expect(diagnosisCell("healthy", 0.6)).toBe("healthy (0.60)");
    expect(diagnosisCell("undetermined", null)).toBe("not judged yet");
    expect(diagnosisCell("manual", 0.95)).toBe("in manual (0.95)");
  });
});
