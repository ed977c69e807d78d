/**
 * The dead-time note on a sluggish finding (lib/assessment/diagnosis.ts, DEAD_TIME_NOTE): the
 * Harris index above 3 and the disturbance time above 15 dead times are both read against the
 * configured dead time, and the yardsticks behind them (a well-tuned PI within 1–3 of minimum
 * variance, common practice; SIMC's closed-loop time constant of one to a few dead times,
 * Skogestad 2003, from memory) are stated in the apparent dead time a step test shows (the
 * transport delay plus about half of a second lag, Skogestad's half rule, from memory). On the
 * independent cross-check set a transport delay alone made SIMC-tuned second-order loops read
 * sluggish (docs/assessment.md, "Harris index", "Which dead time"), so a finding that rests on
 * those figures says what they were measured against. A finding that rests on the loop's own
 * set-point moves needs no dead time and carries no note; the verdict itself is unchanged.
 */
import { describe, expect, it } from "vitest";
import { DEAD_TIME_NOTE, diagnose } from "@/lib/assessment/diagnosis";
import { diagnosisInput } from "./diagnosis-input";

describe("the dead-time note on a sluggish finding", () => {
  it("a finding on the Harris index and the disturbance time names the dead time it was read against", () => {
    const d = diagnose(diagnosisInput({ harrisIndex: 6, disturbanceTimeToDeadTime: 20 }));
    expect(d.label).toBe("sluggish-tuning");
    expect(d.evidence).toContain(DEAD_TIME_NOTE);
  });

  it("the disturbance time alone above 15 dead times carries the note too", () => {
    const d = diagnose(diagnosisInput({ disturbanceTimeToDeadTime: 20 }));
    expect(d.label).toBe("sluggish-tuning");
    expect(d.evidence).toContain(DEAD_TIME_NOTE);
  });

  it("a finding on the loop's own slow set-point response carries no note (no dead time in it)", () => {
    const d = diagnose(
      diagnosisInput({ harrisIndex: 6, setPoint: { slow: true, fast: false, line: "the loop's set-point moves are followed slowly" } }),
    );
    expect(d.label).toBe("sluggish-tuning");
    expect(d.evidence).not.toContain(DEAD_TIME_NOTE);
  });

  it("a healthy loop, and a sluggish finding without a dead-time figure, carry no note", () => {
    const healthy = diagnose(diagnosisInput({ harrisIndex: 1.8, disturbanceTimeToDeadTime: 3 }));
    expect(healthy.label).toBe("healthy");
    expect(healthy.evidence).not.toContain(DEAD_TIME_NOTE);
    const wander = diagnose(diagnosisInput({ overshoot: 0.01 }));
    expect(wander.label).toBe("sluggish-tuning");
    expect(wander.evidence).not.toContain(DEAD_TIME_NOTE);
  });
});
