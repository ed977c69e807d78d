/**
 * A diagnosis input of a quiet loop (no oscillation, no ringing, stiction unlikely, enough data),
 * with the fields a test sets in `o`: for checks of single rules of lib/assessment/diagnosis.ts.
 */
import type { DiagnosisInput } from "@/lib/assessment/diagnosis";

export function diagnosisInput(o: Partial<DiagnosisInput>): DiagnosisInput {
  return {
    spanS: 20_000,
    neededS: 2_000,
    timeScaleS: 100,
    sensor: { badQuality: 0, flatShare: 0, longestFlatS: 0, outOfRange: 0, failureSignal: 0 },
    manual: 0,
    hasMode: true,
    heldOutput: 0,
    saturation: 0,
    limitAlternations: 0,
    saturationMinor: 0,
    oscillation: { detected: false, periodS: 120, regularity: 0.5, persistence: null, amplitudePct: null },
    oscillationInManual: null,
    spOscillates: false,
    stiction: { verdict: "unlikely", evidence: [], curveFitIndex: null, modelFitRatio: null },
    compressed: false,
    harrisIndex: null,
    idleIndex: null,
    disturbanceDecayRatio: null,
    disturbanceTimeToDeadTime: null,
    ringDepth: -0.05,
    overshoot: 0.2,
    noisePct: 0.1,
    spectralLine: null,
    ...o,
  };
}
