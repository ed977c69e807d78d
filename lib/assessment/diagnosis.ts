/**
 * From figures to one finding with its evidence. Order of the checks (common practice: rule out
 * what invalidates the others first): too little data -> sensor fault -> manual -> saturated ->
 * oscillation (from outside, stiction, tuning, outside again) -> ringing without a sustained
 * oscillation (aggressive: a deep dip, or one beyond quarter-amplitude damping) -> increments of
 * the error that swing back less damped than quarter amplitude (Miao & Seborg 1999) -> sluggish
 * (Harris, no swing-back, disturbance time, idle index; not when disturbances are removed within
 * a few dead times) -> healthy; then the set-point overshoot and, on a level loop under PI with an
 * entered dead time, the phase-margin ceiling of its integral time (level-phase-ceiling.ts) may
 * turn a healthy or sluggish verdict into an aggressive one. Every threshold is ours
 * unless a source is named; all figures are scale-free (shares, ratios, correlations, periods
 * relative to the loop's own time scale), so the rules do not depend on units or tags.
 */
import { coherentOutsideCycle, mayBeOwnMode, ownModeLine } from "./coherent-line";
import type { LoadOrValveFigures } from "./load-or-valve";
import { fmt } from "./oscillation";
import type { SensorFigures } from "./sensor";
import { isLine, type SpectralLine } from "./spectral-line";
import type { AcfDecay } from "./acf-decay";
import { errorWanderLine, type ErrorWander } from "./error-wander";
import { extendedLine, harrisSlow, SLUGGISH_INDEX } from "./extended-horizon";
import type { SetPointSigns } from "./setpoint-response";
import { FURTHER_SIGN, HEALTHY, ONE_SIGN, sluggishConfidence, temperForCompression, temperForWeakCycle } from "./tuning-confidence";
import { withSetPointOvershoot } from "./setpoint-overshoot";
import { withPhaseCeiling, type PhaseCeiling } from "./level-phase-ceiling";
import type { Diagnosis, StictionFigures } from "./types";

export interface DiagnosisInput {
  spanS: number;
  /** Data time the loop's time scale asks for, s. */
  neededS: number;
  timeScaleS: number;
  sensor: SensorFigures;
  manual: number;
  hasMode: boolean;
  /** Share of the time the output is held exactly while PV moves (see usage.ts). */
  heldOutput: number;
  saturation: number;
  /** Output moves from one limit to the other this many times; share of time at the less-used limit. */
  limitAlternations: number;
  saturationMinor: number;
  oscillation: { detected: boolean; periodS: number | null; regularity: number | null; persistence: number | null; amplitudePct: number | null };
  oscillationInManual: boolean | null;
  spOscillates: boolean;
  stiction: StictionFigures & { curveFitIndex: number | null; modelFitRatio?: number | null; needsS?: number };
  /** Order of cause and effect within the error's half-cycles (load-or-valve.ts); null when not run. */
  loadOrValve?: LoadOrValveFigures | null;
  compressed: boolean;
  harrisIndex: number | null;
  /** The index at the extended horizon θ + τc, SIMC's tight τc = θ (extended-horizon.ts); null or absent: the Harris index alone decides. */
  extendedHorizonIndex?: number | null;
  idleIndex: number | null;
  disturbanceDecayRatio: number | null;
  /** Slowest disturbance-response time constant over the configured dead time (closed-loop.ts), null without a dead time. */
  disturbanceTimeToDeadTime: number | null;
  /** Most negative error ACF within 1.5 periods of its dominant mode (ringing), null without one. */
  ringDepth: number | null;
  /** The ACF dip relative to its lag-1 value (white noise removed): how far the error swings back; null without a dominant mode. */
  overshoot: number | null;
  noisePct: number;
  /** Strongest spectral line of the error (spectral-line.ts). */
  spectralLine: SpectralLine | null;
  /** Miao–Seborg ACF decay ratio of the differenced error (acf-decay.ts), null without a full swing. */
  acfDecay?: AcfDecay | null;
  /** The loop's response to its own set-point moves against its apparent dead time (setpoint-response.ts). */
  setPoint?: SetPointSigns | null;
  /** The error's spectral peak (no oscillation found) also cycles PV in a manual stretch (manual-cycle.ts). */
  lineInManual?: boolean;
  /** No dominant period at all while the set point holds: the error never swings back within the record (error-wander.ts). */
  errorWander?: ErrorWander | null;
  /** The best phase margin a PI can reach on this integrating loop with its entered dead time (level-phase-ceiling.ts). */
  phaseCeiling?: PhaseCeiling | null;
}

/** Per-period ACF ratio above which an oscillation counts as sustained (a damped mode decays). */
const SUSTAINED = 0.93;
/** ACF dip below which a decaying mode reads as aggressive tuning (ours). */
const AGGRESSIVE_RING = -0.35;
/**
 * Disturbance-response time constant, in dead times, above which a loop without oscillation reads
 * as sluggish. SIMC (Skogestad, J. Process Control 13, 2003; from memory) sets the closed-loop time
 * constant τc = θ for tight control and a few θ for smooth, robust control; 15 θ is ours, above
 * the largest value seen on healthy DEV loops (10) with room for the disturbance's own colour.
 */
const SLUGGISH_TAU = 15;
/** Relative ACF dip below which the error never swings back (ours). */
const NO_SWING = 0.08;
/**
 * Relative ACF dip at or beyond which the error's own swing reads as aggressive tuning. For a
 * damped oscillation the ACF falls from one extreme to the next, half a cycle on, by the square
 * root of the decay ratio, so a dip of half the lag-1 value is quarter-amplitude damping (decay
 * ratio 0.25): the classic target of Ziegler & Nichols (1942; common practice), which today's
 * tuning rules aim well below. Miao & Seborg (1999, IEEE CCA; from memory) read the decay ratio
 * from the error's ACF in the same way. The dip must also exceed RELATIVE_RING_MIN in absolute
 * terms: with a small lag-1 value (an error dominated by white measurement noise) the relative
 * figure is noise (ours).
 */
const QUARTER_SWING = 0.5;
const RELATIVE_RING_MIN = -0.2;
/**
 * The increments' swing must exceed quarter amplitude at about 95 % one-sided confidence: R less
 * 1.645 standard deviations (normal quantile; common practice). A short live window gives a wide
 * interval, so one noisy window makes no finding.
 */
const SWING_Z = 1.645;
/**
 * Disturbance-response time constant, in dead times, below which the loop is not called sluggish
 * whatever the Harris index or the swing-back say: it removes what disturbs it within a few dead
 * times, as fast as SIMC's tight-to-smooth range (τc of one to a few θ; Skogestad 2003, from
 * memory) asks. A loop that is fast against its dead time yet far from minimum variance is the
 * known limit of the Harris index for PI control of lag-dominant processes (the minimum-variance
 * benchmark is not reachable by a PI controller; e.g. Jelali's survey, Control Eng. Practice 14,
 * 2006, from memory). 5 dead times is ours.
 */
const FAST_TAU = 5;

const clamp = (v: number, lo = 0.3, hi = 0.95) => Math.min(hi, Math.max(lo, v));

/**
 * Both dead-time yardsticks (Harris index above 3, disturbance time above 15 dead times) are stated
 * against the apparent dead time a step test shows; against the transport delay alone, a well-tuned
 * loop on a process with a second lag reads sluggish (cross-check set: docs/assessment.md, "Harris
 * index", "Which dead time").
 */
export const DEAD_TIME_NOTE =
  "measured against the configured dead time: it should be the apparent one a step test shows (the transport delay plus about half of a second lag); against the transport delay alone a well-tuned loop on a lagged process reads this way";

export function diagnose(x: DiagnosisInput): Diagnosis {
  const figures = temperForCompression(diagnoseFigures(x), { compressed: x.compressed, oscillationDetected: x.oscillation.detected, saturation: x.saturation });
  // the set-point response's overshoot (setpoint-overshoot.ts): not read from the error's correlation, so after the compression cap
  const o = withSetPointOvershoot(figures, { overshoot: x.setPoint?.overshoot, slow: x.setPoint?.slow, ringDepth: x.ringDepth, acfDecay: x.acfDecay });
  // the settings against the entered dead time (level-phase-ceiling.ts): not read from the data, so after the compression cap too
  const d = withPhaseCeiling(o, x.phaseCeiling ?? null, { ringDepth: x.ringDepth, acfDecay: x.acfDecay });
  return temperForWeakCycle(d, { regularity: x.oscillation.regularity, periodS: x.oscillation.periodS, spectralLine: x.spectralLine });
}

function diagnoseFigures(x: DiagnosisInput): Diagnosis {
  const sf = x.sensor;
  if (sf.badQuality > 0.05) return { label: "sensor-fault", confidence: clamp(0.6 + sf.badQuality), evidence: [`likely a measurement fault: ${pct(sf.badQuality)} of samples have bad quality`] };
  if (x.manual > 0.5) return { label: "manual", confidence: clamp(x.manual), evidence: [`likely not in service: in manual ${pct(x.manual)} of the time`] };
  if (!x.hasMode && x.heldOutput > 0.5) {
    return {
      label: "manual",
      confidence: clamp(x.heldOutput - 0.1),
      evidence: [`likely in manual: the output stays exactly constant while PV moves ${pct(x.heldOutput)} of the time (the export has no mode column)`],
    };
  }
  if (sf.flatShare > 0.05) {
    return {
      label: "sensor-fault",
      confidence: clamp(0.6 + sf.flatShare),
      evidence: [`likely a frozen measurement or a fault value: PV stays exactly constant for ${pct(sf.flatShare)} of the time (longest ${fmt(sf.longestFlatS, 0)} s), far longer than its noise allows`],
    };
  }
  if (sf.outOfRange > 0.03) {
    return { label: "sensor-fault", confidence: clamp(0.6 + sf.outOfRange), evidence: [`likely a measurement fault: PV leaves its range while the output is still free, ${pct(sf.outOfRange)} of the time`] };
  }
  if (sf.failureSignal > 0.03) {
    return {
      label: "sensor-fault",
      confidence: clamp(0.6 + sf.failureSignal),
      evidence: [`likely a failed measurement: PV lies beyond what a working transmitter reports (NAMUR NE 43 measurement limits −1.25 % / +103.1 % of span) ${pct(sf.failureSignal)} of the time${x.saturation > 0.2 ? "; the output at its limit follows from the false reading" : ""}`],
    };
  }
  // An output driven from stop to stop many times (each limit reached at least a fifth as often
  // as the saturation share) is a cycle's symptom: the oscillation checks decide (ours).
  const stopToStop = x.limitAlternations >= 10 && x.saturationMinor >= 0.2 * x.saturation;
  if (x.saturation > 0.2 && !stopToStop) return { label: "saturated", confidence: clamp(0.5 + x.saturation), evidence: [`likely saturated: MV at a limit ${pct(x.saturation)} of the time, the loop cannot act`] };
  const periods = x.oscillation.periodS ? x.spanS / x.oscillation.periodS : 0;
  const enoughForOscillation = x.oscillation.detected && periods >= 5;
  if (x.spanS < x.neededS && !enoughForOscillation) {
    return {
      label: "undetermined",
      confidence: 0,
      evidence: [`${fmt(x.spanS, 0)} s of data; this loop needs about ${fmt(x.neededS, 0)} s for a verdict from routine data (its time scale is ${fmt(x.timeScaleS, 0)} s)`],
      reason: "too little data for the loop's time scale",
      needsS: Math.ceil(x.neededS - x.spanS),
    };
  }

  const osc = x.oscillation;
  const persistence = osc.persistence;
  if (osc.detected) {
    const oscLine = `oscillation with period ${fmt(osc.periodS, 1)} s, regularity ${fmt(osc.regularity)} (Thornhill et al. 2003)`;
    if (x.oscillationInManual) {
      return { label: "external-disturbance", confidence: 0.85, evidence: [`likely an oscillation from outside: it persists while the loop is in manual`, oscLine] };
    }
    if (x.spOscillates) {
      return { label: "external-disturbance", confidence: 0.7, evidence: ["likely an oscillation from outside: the set point itself oscillates (e.g. from a master loop)", oscLine] };
    }
    const order = x.loadOrValve;
    if (order?.reading === "load") {
      // An abrupt outside load passes the stick-slip tests too; the order of cause and effect decides.
      const tests = x.stiction.evidence.filter((e) => !e.startsWith("likely "));
      if (x.stiction.verdict === "likely") tests.unshift("the stiction tests alone point to a stick-slip cycle, whose PV jumps and MV ramps an outside load that switches abruptly also gives");
      return { label: "external-disturbance", confidence: clamp(0.55 + Math.abs(order.asymmetry!)), evidence: [`likely an outside load that switches abruptly: ${order.line}`, oscLine, ...tests] };
    }
    // A stick-slip-like cycle that keeps its phase like an outside source's (coherent-line.ts).
    const coherent = x.stiction.verdict === "likely" ? coherentOutsideCycle(x.spectralLine, osc.periodS, x.spanS) : null;
    if (coherent) return outsideNotValve(x, coherent, oscLine);
    if (x.stiction.verdict === "likely") {
      return { label: "valve-stiction", confidence: stictionConfidence(x, 0.6), evidence: [...x.stiction.evidence.slice(0, 1), oscLine, ...x.stiction.evidence.slice(1), ...orderLine(x)] };
    }
    const sustained = persistence !== null && persistence > SUSTAINED;
    // A decaying cycle's line is outside only when it is narrower than the loop's own damped mode
    // could make it (coherent-line.ts, ownModeLine); otherwise the decay is the loop's own.
    if (isLine(x.spectralLine) && !sustained && !mayBeOwnMode(x.spectralLine!)) {
      return { label: "external-disturbance", confidence: 0.7, evidence: [lineLine(x.spectralLine!), oscLine, ...x.stiction.evidence] };
    }
    if (sustained && x.compressed) {
      // The shape tests were withheld (compression fakes stick-slip shapes), so the cycle's not
      // decaying is the only sign: it rules out the loop's own mode, not a sticking valve.
      return {
        label: "external-disturbance",
        confidence: ONE_SIGN,
        evidence: [
          "possibly an oscillation from outside: the cycle does not decay (a stable loop's own mode would); a sticking valve's cycle does not decay either, and the export looks compressed, which hides the stick-slip shape that would tell the two apart (Thornhill, Choudhury & Shah 2004); an export of the raw values, or the cycle seen with the loop in manual, would decide",
          oscLine,
          `autocorrelation kept ${fmt(persistence)} of its height from one period to the next`,
          ...x.stiction.evidence,
        ],
      };
    }
    if (sustained) {
      return {
        label: "external-disturbance",
        confidence: clamp(0.5 + 3 * (persistence! - SUSTAINED)),
        evidence: [
          "likely an oscillation from outside: the cycle does not decay (a stable loop's own mode would), and its shape is not a stick-slip cycle",
          oscLine,
          `autocorrelation kept ${fmt(persistence)} of its height from one period to the next`,
          ...x.stiction.evidence,
        ],
      };
    }
    return {
      label: "aggressive-tuning",
      confidence: clamp(0.5 + 0.5 * (1 - (persistence ?? 0.5))),
      evidence: ["likely aggressive tuning: a regular, decaying (linear) oscillation of the loop's own mode", oscLine, ...(isLine(x.spectralLine) ? [ownModeLine(x.spectralLine!)] : []), ...x.stiction.evidence],
    };
  }
  if (x.lineInManual && x.spectralLine) {
    return { label: "external-disturbance", confidence: 0.7, evidence: [`likely an oscillation from outside: a cycle of about ${fmt(x.spectralLine.periodS, 0)} s in the error (a spectral peak ${fmt(x.spectralLine.ratio, 0)}× its neighbours) persists while the loop is in manual, where neither tuning nor a valve can drive it (Hägglund 1995)`] };
  }
  if (x.ringDepth !== null && x.ringDepth < -0.15) {
    const coherent = x.stiction.verdict === "likely" ? coherentOutsideCycle(x.spectralLine, osc.periodS, x.spanS) : null;
    if (coherent) return outsideNotValve(x, coherent, `irregular cycles of about ${fmt(osc.periodS, 1)} s`);
    if (x.stiction.verdict === "likely" && x.loadOrValve?.reading !== "load") {
      return { label: "valve-stiction", confidence: stictionConfidence(x, 0.5), evidence: [...x.stiction.evidence.slice(0, 1), `irregular cycles of about ${fmt(osc.periodS, 1)} s`, ...x.stiction.evidence.slice(1), ...orderLine(x)] };
    }
  }
  if (isLine(x.spectralLine)) {
    return { label: "external-disturbance", confidence: 0.6, evidence: [lineLine(x.spectralLine!), "the oscillation test did not fire: random disturbances of the loop mask the cycle in the time domain"] };
  }
  // Stiction likely without a cycle in the whole record: a level loop's stick-slip ramps
  // (stiction.ts, quietLevelStiction) or a cycle between set-point moves (ringsBetweenMoves).
  if (x.stiction.verdict === "likely" && !(x.ringDepth !== null && x.ringDepth < -0.15)) return { label: "valve-stiction", confidence: stictionConfidence(x, 0.45), evidence: x.stiction.evidence };
  // A stick-slip shape too few cycles can confirm (stiction-few-cycles.ts): the time still needed, not a guess.
  if (x.stiction.needsS) return { label: "undetermined", confidence: 0, evidence: x.stiction.evidence, reason: "too few cycles to tell a sticking valve from the loop's own mode", needsS: x.stiction.needsS };
  if (x.ringDepth !== null && x.ringDepth < -0.15) {
    if (x.ringDepth < AGGRESSIVE_RING) {
      return {
        label: "aggressive-tuning",
        confidence: clamp(0.4 + (AGGRESSIVE_RING - x.ringDepth)),
        evidence: [`likely aggressive tuning: the error rings after disturbances (its autocorrelation dips to ${fmt(x.ringDepth)} within a period of about ${fmt(osc.periodS, 1)} s) without a stick-slip shape`, ...x.stiction.evidence],
      };
    }
    if (x.overshoot !== null && x.overshoot >= QUARTER_SWING && x.ringDepth < RELATIVE_RING_MIN) {
      return {
        label: "aggressive-tuning",
        confidence: 0.5,
        evidence: [
          `likely aggressive tuning: the error swings back past the set point by ${fmt(x.overshoot)} of its excursion (autocorrelation dip ${fmt(x.ringDepth)} against ${fmt(x.ringDepth / -x.overshoot)} at lag 1, within a period of about ${fmt(osc.periodS, 1)} s): less damped than quarter amplitude (decay ratio 0.25; Ziegler & Nichols 1942, Miao & Seborg 1999)`,
          ...x.stiction.evidence,
        ],
      };
    }
  }
  // Damping from the differenced error (acf-decay.ts): judged on R less SWING_Z standard deviations,
  // so a poorly determined swing makes no finding; the confidence rises with that lower bound.
  // A loop that takes more than SLUGGISH_TAU dead times to remove its disturbances is not
  // aggressive, whatever its increments' swing (ours).
  const slowLoop = x.disturbanceTimeToDeadTime !== null && x.disturbanceTimeToDeadTime > SLUGGISH_TAU;
  const swing = x.acfDecay ?? null;
  const lo = swing ? swing.ratio - SWING_Z * swing.ratioSd : 0;
  if (swing && !slowLoop && lo >= QUARTER_SWING) {
    return {
      label: "aggressive-tuning",
      confidence: clamp(0.45 + (lo - QUARTER_SWING), 0.45, 0.75),
      evidence: [
        `likely aggressive tuning: after each disturbance the error swings back with a decay ratio of about ${fmt(swing.decayRatio)} per period of ${fmt(swing.periodS, 0)} s, less damped than quarter amplitude (autocorrelation decay ratio of the error's increments R = ${fmt(swing.ratio)} ± ${fmt(swing.ratioSd)}, 0.5 at quarter amplitude; Miao & Seborg 1999)`,
        ...x.stiction.evidence,
      ],
    };
  }
  if (stopToStop && x.saturation > 0.2) {
    return {
      label: "aggressive-tuning",
      confidence: 0.6,
      evidence: [
        `likely aggressive tuning: the output is driven from one limit to the other ${x.limitAlternations} times (at a limit ${pct(x.saturation)} of the time), with no outside cycle or stick-slip sign: the controller acts far harder than the loop needs`,
      ],
    };
  }
  const idle = x.idleIndex;
  const harris = x.harrisIndex;
  const noSwing = x.overshoot !== null && x.overshoot < NO_SWING;
  const wander = x.errorWander ?? null;
  const tauToDead = x.disturbanceTimeToDeadTime;
  const slow = tauToDead !== null && tauToDead > SLUGGISH_TAU;
  const fast = (tauToDead !== null && tauToDead < FAST_TAU) || x.setPoint?.fast === true;
  const spSlow = x.setPoint?.slow === true;
  // The Harris sign holds only when the index stays high at SIMC's tight closed-loop time too (extended-horizon.ts).
  const harrisHigh = harrisSlow(harris, x.extendedHorizonIndex);
  const extLine = extendedLine(harris, x.extendedHorizonIndex, fmt);
  if (!fast && (harrisHigh || noSwing || wander !== null || slow || spSlow || (idle !== null && idle > 0.6))) {
    const ev = ["likely sluggish tuning: no oscillation, and the loop removes its disturbances slowly"];
    if (harris !== null) ev.push(`variance ${fmt(harris, 1)}× the minimum the dead time allows (Harris index; a well-tuned PI loop is typically within 1–3, common practice)`);
    if (extLine) ev.push(extLine);
    if (noSwing) ev.push(`the error hardly swings back past the set point after a disturbance (autocorrelation dip ${fmt(-x.overshoot!)} of its lag-1 value): an overdamped, slow recovery`);
    if (wander) ev.push(errorWanderLine(wander, fmt));
    if (slow) ev.push(`the slowest disturbance-response pole has a time constant of ${fmt(x.disturbanceTimeToDeadTime!, 0)} dead times; tuning for τc of one to a few dead times (SIMC, Skogestad 2003) removes disturbances far faster`);
    if (spSlow) ev.push(x.setPoint!.line!);
    if (idle !== null) ev.push(`idle index ${fmt(idle)} (${idle > 0.6 ? "near +1: sluggish" : "not a sign by itself: near +1 would be sluggish"}; Hägglund 1999)`);
    if ((harrisHigh || slow) && !spSlow) ev.push(DEAD_TIME_NOTE);
    // A work item only when the Harris index and the disturbance time agree, or the loop's own
    // set-point response is slow (tuning-confidence.ts).
    const c = sluggishConfidence({ harris: harrisHigh, slow, noSwing: noSwing || wander !== null, idle: idle !== null && idle > 0.6, setPoint: spSlow, hasEstimators: x.disturbanceTimeToDeadTime !== null || harris !== null });
    return { label: "sluggish-tuning", confidence: c.confidence, evidence: [...ev, ...c.notes] };
  }
  const ev = ["likely healthy: no oscillation, no stiction sign, the error does not ring"];
  if (x.setPoint?.line) ev.push(x.setPoint.line);
  if (tauToDead !== null && tauToDead < FAST_TAU) ev.push(`the slowest disturbance-response pole has a time constant of ${fmt(tauToDead!, 1)} dead times: disturbances are removed about as fast as the dead time allows (SIMC τc of one to a few dead times, Skogestad 2003)${harris !== null && harris > SLUGGISH_INDEX ? "; the Harris index is high, but a PI loop on a process with lags cannot reach minimum variance" : ""}`);
  if (idle !== null) ev.push(`idle index ${fmt(idle)} (near +1 would read sluggish; under continuously varying loads it stays negative whatever the tuning, so it does not show the loop well tuned; Hägglund 1999)`);
  if (harris !== null) ev.push(`variance ${fmt(harris, 1)}× the minimum for the dead time (Harris index)`);
  if (extLine) ev.push(extLine);
  // Only a figure that weighs the loop's speed against the process (the Harris index, the
  // disturbance time against the dead time, the set point's own moves) adds to "no fault sign
  // found"; the idle index does not (it reads only load steps; tuning-confidence.ts, rule 4).
  return { label: "healthy", confidence: clamp(HEALTHY + ((harris !== null && harris < 3) || fast ? FURTHER_SIGN : 0)), evidence: ev };
}

function lineLine(l: SpectralLine): string {
  return `likely a periodic disturbance from outside: the error carries a spectral line at ${fmt(l.periodS, 1)} s (${fmt(l.ratio, 0)}× its neighbours, ${pct(l.share)} of the variance); a loop's own mode under random disturbances gives a broad peak, not a line (Fisher's periodogram test, 1929)`;
}

/** An outside cycle that the stiction tests alone would have blamed on the valve: their readings stay in the evidence. */
function outsideNotValve(x: DiagnosisInput, coherent: string, cycleLine: string): Diagnosis {
  const tests = x.stiction.evidence.filter((e) => !e.startsWith("likely "));
  return { label: "external-disturbance", confidence: 0.6, evidence: [coherent, cycleLine, "the stiction tests alone point to a stick-slip cycle: they read the cycle's shape, which an outside load can give too, not where its period comes from", ...tests] };
}

function orderLine(x: DiagnosisInput): string[] {
  return x.loadOrValve?.line ? [x.loadOrValve.line] : [];
}

/** Higher with a more triangular shape; lower when the cross-correlation reads even. */
function stictionConfidence(x: DiagnosisInput, base: number): number {
  const shape = Math.max(-0.1, (x.stiction.curveFitIndex ?? 0.6) - 0.6);
  // The model fit's gain over a linear valve (Jelali 2008) adds when it is clear.
  const ratio = x.stiction.modelFitRatio ?? 1;
  const model = ratio <= 0.95 ? Math.min(0.25, 0.05 + (0.95 - ratio)) : 0;
  const even = x.stiction.evidence.some((e) => e.includes("reads even"));
  // The half-cycles' order (load-or-valve.ts): build-up then release confirms, a lean toward jump-then-decay tempers.
  const order = x.loadOrValve?.reading;
  return clamp(base + shape + model - (even ? 0.1 : 0) + (order === "valve" ? 0.05 : order === "leans-load" ? -0.1 : 0));
}

function pct(v: number): string {
  return `${(100 * v).toFixed(0)} %`;
}
