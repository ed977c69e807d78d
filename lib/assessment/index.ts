/**
 * Routine-data assessment of one loop (pure, browser-safe): `assessLoop(samples, config)` turns
 * a window of samples into the report of the `assess` command. The methods and their sources are
 * named in each file and in docs/assessment.md.
 */
import { differencedErrorDecay } from "./acf-decay";
import { loopMargin } from "./loop-margin";
import { marginMayDecide, withLoopMargin } from "./loop-margin-sign";
import { countExcitation, disturbanceResponse, disturbanceTimeConstantS, estimationFactor, ownClosedLoopPoles } from "./closed-loop";
import { detectCompression } from "./compression";
import { errorWander } from "./error-wander";
import { deadTimeCaution, integralTime, isIntegrating, type LoopConfig } from "./config";
import { loadOrValve } from "./load-or-valve";
import { diagnose } from "./diagnosis";
import { extendedHorizonSamples } from "./extended-horizon";
import { harrisIndex } from "./harris";
import { persistsInManual } from "./manual-cycle";
import { countLoadDisturbances, detectOscillation, oscillatesAt } from "./oscillation";
import { autocorrelation, variance } from "./signal";
import { sensorFigures } from "./sensor";
import { idleIndex } from "./sluggishness";
import { levelPhaseCeiling } from "./level-phase-ceiling";
import { setPointResponse, setPointSigns, spanTimeScale } from "./setpoint-response";
import { settledMask, strongestLine } from "./spectral-line";
import { assessStiction } from "./stiction";
import type { AssessSample, LoopAssessmentReport } from "./types";
import { WEAK_LINE } from "./tuning-confidence";
import { computeUsage } from "./usage";
import { buildWindow, constantSpStretches, isClosed } from "./window";

export * from "./types";
export { parseLoopConfig, loopConfigSchema, LoopConfigError, deadTimeCaution, DEAD_TIME_DISAGREEMENT, type LoopConfig, type LoopConfigInput } from "./config";
export { parseAssessCsv, AssessCsvError, type ParsedAssessCsv } from "./csv";
export { buildWindow, type AssessWindow } from "./window";

/** Data span wanted, in multiples of the loop's time scale (Ti or dead time), or of the error's decorrelation time; ours. */
const SPAN_FACTOR = 20;
const DECORRELATIONS = 30;
/** ACF depth below which the error counts as ringing (ours). */
const RING_DEPTH = -0.15;

function sortSamples(samples: readonly AssessSample[]): readonly AssessSample[] {
  for (let i = 1; i < samples.length; i++) if (!(samples[i]!.t > samples[i - 1]!.t)) return [...samples].sort((a, b) => a.t - b.t).filter((s, i, a) => i === 0 || s.t > a[i - 1]!.t);
  return samples;
}

/** Assessment of a loop from a window of samples (irregular spacing allowed). */
export function assessLoop(input: readonly AssessSample[], config: LoopConfig): LoopAssessmentReport {
  const samples = sortSamples(input);
  const w = buildWindow(samples, config);
  const cautions: string[] = [];
  const usage = computeUsage(w, config);
  const compression = detectCompression(samples, config, w.rawSpacing, usage.pvNoisePct, w.interpolatedShare);
  if (compression.compressed) cautions.push(`The export looks compressed or quantised (${compression.reasons.join("; ")}): stiction and Harris figures are withheld, variances may be low.`);
  if (w.rawSpacing > 1.5 * config.samplePeriodS && !compression.compressed) cautions.push(`Stored points are ${(w.rawSpacing / config.samplePeriodS).toFixed(1)}× the loop's sample period apart; fast dynamics are not seen.`);
  if (w.gapShare > 0.01) cautions.push(`The export has gaps (${(100 * w.gapShare).toFixed(0)} % of the span without data); figures use the data on either side only.`);
  const ti = integralTime(config);
  const integrating = isIntegrating(config);

  // Closed-loop, good samples.
  const include = new Uint8Array(w.n);
  let closedCount = 0;
  for (let i = 0; i < w.n; i++) if (w.good[i] && isClosed(w, i)) {
    include[i] = 1;
    closedCount++;
  }
  // Error with excluded samples at its closed-loop mean (so the ACF is not torn by manual stretches).
  let emean = 0;
  for (let i = 0; i < w.n; i++) if (include[i]) emean += w.e[i]!;
  emean = closedCount ? emean / closedCount : 0;
  const eClosed = new Float64Array(w.n);
  for (let i = 0; i < w.n; i++) eClosed[i] = include[i] ? w.e[i]! : emean;

  const acfFull = autocorrelation(eClosed, Math.floor(w.n * 0.6));
  const osc = detectOscillation(eClosed, w.T, { acf: acfFull });
  const periodSamples = osc.periodS ? osc.periodS / w.T : null;
  // Oscillation while in manual (outside cause): PV of the manual stretches, at the same period.
  const oscillationInManual = osc.detected && periodSamples && w.hasMode ? persistsInManual(w, periodSamples) : null;
  const spVar = variance(w.sp);
  const spOscillates = osc.detected && periodSamples !== null && spVar > 0 && oscillatesAt(w.sp, 0, w.n, periodSamples);

  // Ringing: the error's ACF dips well below zero within one and a half periods (a decaying
  // mode, or an irregular cycle), even when the oscillation test above does not fire.
  // Measured against the lag-1 value, so white measurement noise (which lowers every lag > 0
  // alike) does not hide the ringing of the loop.
  const acfLag1 = Math.max(acfFull[1] ?? 0, 0.05);
  let ringDepth = 0;
  if (periodSamples) for (let k = 1; k < Math.min(acfFull.length, Math.ceil(1.5 * periodSamples)); k++) ringDepth = Math.min(ringDepth, acfFull[k]!);
  const overshoot = periodSamples ? Math.max(0, -ringDepth / acfLag1) : null;
  const ringing = periodSamples !== null && ringDepth < RING_DEPTH;
  const stiction = assessStiction({
    pv: w.pvPct,
    mv: w.mv,
    include,
    T: w.T,
    periodS: osc.periodS,
    oscillating: osc.detected || ringing,
    ringingOnly: !osc.detected,
    integrating,
    ti,
    compressed: compression.compressed,
    outsideOscillation: oscillationInManual === true || spOscillates,
    mvLimits: [config.controller.mvLo, config.controller.mvHi],
    setPoint: { e: w.e, sp: w.sp, tol: 1e-4 * w.pvSpan },
  });

  // Outside load or sticking valve: the order of cause and effect within the error's half-cycles.
  const order = (osc.detected || ringing) && osc.periodS && !compression.compressed ? loadOrValve({ e: w.e, sp: w.sp, include, T: w.T, periodS: osc.periodS }) : null;

  // Harris index over constant-SP stretches.
  // The loop's time scale: its integral time, but no more than ten dead times when the dead time
  // is known (a sluggish loop's long Ti says little about how fast the process is).
  const dead = config.deadTimeS ?? null;
  const timeScale = (dead !== null && dead > 0 ? Math.max(dead, Math.min(ti ?? Infinity, 10 * dead)) : ti) ?? 10 * config.samplePeriodS;
  const minStretch = Math.max(50, Math.ceil((2 * timeScale) / w.T));
  const stretchLength = Math.min(minStretch, Math.max(50, Math.floor(w.n / 4)));
  const stretches = constantSpStretches(w, stretchLength);
  // The error's figures (Harris index, disturbance response, the increments' swing) on the
  // constant-set-point stretches, or on all closed-loop stretches when the set point hardly ever
  // stays put (a cascade slave's set point from its master).
  const errorStretches = setPointWanders(w, stretches, closedCount) ? constantSpStretches(w, stretchLength, true) : stretches;
  if (errorStretches !== stretches) cautions.push(SP_WANDER_CAUTION);
  let harris: LoopAssessmentReport["harrisIndex"] = null;
  let harrisDetail: LoopAssessmentReport["details"]["harris"] = null;
  const deadTimeDisagreement = deadTimeCaution(config);
  if (deadTimeDisagreement) cautions.push(deadTimeDisagreement);
  if (config.deadTimeS === null || config.deadTimeS === undefined) cautions.push("No dead time configured: the Harris index needs it (dead time cannot be told from routine closed-loop data; take it from a step test).");
  else if (compression.compressed) cautions.push("Harris index withheld: compressed data bias variances.");
  else {
    const b = Math.floor(config.deadTimeS / w.T) + 1;
    const h = harrisIndex(w.e, errorStretches, b, undefined, extendedHorizonSamples(config.deadTimeS, w.T));
    if (h) {
      harris = h.index;
      harrisDetail = { delaySamples: h.delaySamples, samplesUsed: h.samplesUsed, periodS: w.T, extendedIndex: h.extended?.index ?? null, extendedDelaySamples: h.extended?.delaySamples ?? null };
      if (w.T > config.samplePeriodS * 1.01) cautions.push(`Harris index computed at the export's ${w.T} s spacing, coarser than the loop's ${config.samplePeriodS} s.`);
    } else cautions.push("Harris index: too few constant-set-point samples in closed loop.");
  }

  // Idle index (Hägglund 1999).
  const idle = idleIndex({
    pv: w.pvPct,
    mv: w.mv,
    e: w.e,
    include: stretchMask(w.n, stretches),
    T: w.T,
    filterS: Math.max(3 * w.T, timeScale / 5),
    gainSign: config.controller.action === "reverse" ? 1 : -1,
    pvNoise: usage.pvNoisePct,
    mvNoise: usage.mvNoise,
  });
  const load = ti !== null || osc.periodS ? countLoadDisturbances(w.e, w.T, ti ?? osc.periodS!, include) : null;

  // Closed-loop dynamics.
  const d = estimationFactor(w, config);
  const excitation = countExcitation(w, Math.max(3 * usage.noiseBand, 0.005 * w.pvSpan), Math.max(1, 6 * usage.mvNoise));
  let own = null;
  if (excitation.spMoves >= 2 || excitation.manualMoves >= 2) own = ownClosedLoopPoles(w, config, d);
  // Cross-check: the period of the loop's own dominant oscillating pole, 2π·T/|arg z| (where a
  // model exists), against the oscillation's period.
  let ownPeriodS: number | null = null;
  if (own) {
    let best = -1;
    for (const p of own.poles) {
      const r = Math.hypot(p.re, p.im);
      if (Math.abs(p.im) > 1e-9 && r > best) {
        best = r;
        ownPeriodS = (2 * Math.PI * config.samplePeriodS) / Math.abs(Math.atan2(p.im, p.re));
      }
    }
    if (osc.detected && osc.periodS && ownPeriodS) {
      const ratio = osc.periodS / ownPeriodS;
      cautions.push(
        Math.abs(ratio - 1) <= 0.2
          ? `The oscillation's period (${osc.periodS.toFixed(1)} s) matches the loop's own dominant mode as identified (${ownPeriodS.toFixed(1)} s): the loop's tuning likely takes part in it (an outside oscillation in the data can bias that identification).`
          : `The oscillation's period (${osc.periodS.toFixed(1)} s) differs from the loop's own dominant mode as identified (${ownPeriodS.toFixed(1)} s): likely not the loop's own linear mode.`,
      );
    }
  }
  if (!own) cautions.push("The loop's own closed-loop poles need set-point moves (or output moves in manual); routine data at a constant set point do not identify them.");
  const dist = disturbanceResponse(w.e, errorStretches, w.T, config.samplePeriodS, d);
  const distTau = disturbanceTimeConstantS(dist, config.samplePeriodS);
  const acfDecay = differencedErrorDecay(w.e, errorStretches, w.T, d, usage.pvNoisePct);
  const distTauToDead = distTau !== null && dead !== null && dead > 0 ? distTau / dead : null;
  if (dist) cautions.push("disturbanceResponse: poles of an AR model of the control error in routine operation; they mix the loop's response with the disturbance's own dynamics and are not the loop's poles.");

  // A periodic component from outside shows as a spectral line in the error; a weaker peak that
  // persists in PV while the loop is in manual is outside too (manual-cycle.ts).
  const line = strongestLine(w.e, settledMask(w.e, w.sp, include, w.pvSpan), w.T);
  const lineInManual = !osc.detected && line && line.ratio >= WEAK_LINE && w.hasMode ? persistsInManual(w, line.periodS / w.T) === true : false;

  const acf = acfFull.subarray(0, Math.min(acfFull.length, Math.max(20, Math.round((osc.periodS ?? timeScale * 2) / w.T) * 2)));

  const sensor = sensorFigures(w, config, compression.repeatShare);
  // Data span: enough when it covers SPAN_FACTOR loop time scales, or when the error decorrelates
  // within a thirtieth of the span (many independent stretches: judged from the data themselves).
  let decorrelation = acfFull.length;
  const r1 = acfFull[1] ?? 0;
  for (let k = 1; k < acfFull.length; k++) if (acfFull[k]! < 0.37 * Math.max(r1, 0)) {
    decorrelation = k;
    break;
  }
  const decorrelationS = decorrelation * w.T;
  // The loop's response to its own set-point moves (setpoint-response.ts): a sluggishness sign,
  // and an apparent dead time that caps the time scale the data span is judged against.
  // (Most loops hold their set point: nothing to read, and no copy of it in % to make.)
  const spResp = spVar > 0 ? setPointResponse({ pv: w.pvPct, sp: w.sp.map((v) => (100 * (v - config.pvLo)) / w.pvSpan), stretches: constantSpStretches(w, 100, true), T: w.T, horizonS: 20 * (ti ?? timeScale) }) : null;
  const spSigns = setPointSigns(spResp, integrating);
  // No swing-back at all within the record while the set point holds (error-wander.ts).
  const wander = errorWander({ acf: acfFull, T: w.T, n: w.n, periodFound: osc.periodS !== null, crossings: osc.crossings, setPointHeld: spResp === null && errorStretches === stretches, integrating });
  const spanScale = spanTimeScale(timeScale, dead, spSigns.line !== null ? spResp : null, cautions);
  const neededS = Math.max(Math.min(SPAN_FACTOR * spanScale, DECORRELATIONS * decorrelationS), 200 * config.samplePeriodS, 4 * decorrelationS);

  const firstDiagnosis = diagnose({
    spanS: w.spanS,
    neededS,
    timeScaleS: spanScale,
    sensor,
    manual: usage.manual,
    hasMode: w.hasMode,
    heldOutput: usage.heldOutput,
    saturation: usage.saturation,
    limitAlternations: usage.limitAlternations,
    saturationMinor: usage.saturationMinor,
    oscillation: { ...osc, amplitudePct: osc.amplitude },
    oscillationInManual,
    spOscillates,
    stiction: { ...stiction, curveFitIndex: stiction.tests.curveFit.index, modelFitRatio: stiction.tests.modelFit.residualRatio },
    loadOrValve: order,
    compressed: compression.compressed,
    harrisIndex: harris,
    extendedHorizonIndex: harrisDetail?.extendedIndex ?? null,
    idleIndex: idle?.index ?? null,
    disturbanceDecayRatio: dist?.decayRatio ?? null,
    disturbanceTimeToDeadTime: distTauToDead,
    ringDepth: periodSamples ? ringDepth : null,
    overshoot,
    spectralLine: line,
    lineInManual,
    acfDecay,
    noisePct: usage.pvNoisePct,
    setPoint: spSigns,
    errorWander: wander,
    phaseCeiling: levelPhaseCeiling({ integrating, tiS: ti, tdS: config.controller.td, deadTimeS: config.deadTimeS }),
  });
  // The loop's robustness from the process identified in closed loop (loop-margin.ts): computed
  // only where it may decide (a healthy or possible-sluggish verdict, a dead time, no compression).
  const c = config.controller;
  const margin =
    dead !== null && dead > 0 && !compression.compressed && marginMayDecide(firstDiagnosis)
      ? loopMargin({ pv: w.pvPct, mv: w.mv, stretches: errorStretches, T: w.T, deadTimeS: dead, controller: { kp: c.kp, ti, td: c.td ?? 0, tf: c.derivativeFilterS ?? undefined, action: c.action, form: c.form } })
      : null;
  const diagnosis = withLoopMargin(firstDiagnosis, margin);

  return {
    samples: w.samples,
    spanS: w.spanS,
    serviceFactor: usage.serviceFactor,
    manual: usage.manual,
    saturation: usage.saturation,
    oscillation: {
      detected: osc.detected,
      periodS: osc.detected ? osc.periodS : null,
      regularity: osc.regularity,
      amplitude: osc.detected && osc.amplitude !== null ? (osc.amplitude * w.pvSpan) / 100 : null,
    },
    stiction: { verdict: stiction.verdict, evidence: stiction.evidence },
    harrisIndex: harris,
    spectralRadius: own?.spectralRadius ?? null,
    decayRatio: own?.decayRatio ?? null,
    poles: own?.poles ?? [],
    disturbanceResponse: dist ? { poles: dist.poles, spectralRadius: dist.spectralRadius } : null,
    diagnosis,
    cautions,
    details: {
      analysisPeriodS: w.T,
      idleIndex: idle?.index ?? null,
      loadDisturbances: load ? { count: load.count, supervisionS: load.supervisionS, iaeLimit: load.iaeLimit, rate: load.rate } : null,
      badQuality: w.badQualityShare,
      valveTravelPctPerHour: usage.valveTravelPctPerHour,
      valveReversalsPerHour: usage.valveReversalsPerHour,
      noiseBand: usage.noiseBand,
      compression,
      stictionTests: stiction.tests,
      loadOrValve: order ? { reading: order.reading, asymmetry: order.asymmetry, tStat: order.tStat, lengthCv: order.lengthCv, halfCycles: order.halfCycles } : null,
      harris: harrisDetail,
      oscillationInManual,
      dominantPeriodS: osc.periodS,
      ownModePeriodS: ownPeriodS,
      errorDecorrelationS: decorrelation < acfFull.length ? decorrelationS : null,
      ringDepth: periodSamples ? ringDepth : null,
      spectralLine: line ? { periodS: line.periodS, ratio: line.ratio, share: line.share, near: line.near } : null,
      disturbanceDecayRatio: dist?.decayRatio ?? null,
      disturbanceTimeToDeadTime: distTauToDead,
      acfDecay: acfDecay ? { ratio: acfDecay.ratio, decayRatio: acfDecay.decayRatio, periodS: acfDecay.periodS, depth: acfDecay.depth, ratioSd: acfDecay.ratioSd } : null,
      setPointResponse: spResp ? { deadTimeS: spResp.deadTimeS, t63S: spResp.t63S, horizonS: spResp.horizonS, ratio: spResp.ratio, lowerBound: spResp.lowerBound, shortOfMove: spResp.shortOfMove, strength: spResp.strength, overshoot: spResp.overshoot, overshootSe: spResp.overshootSe } : null,
      errorWander: wander,
      loopMargin: margin ? { ms: margin.ms, msLower: margin.msLower, gainMargin: margin.gainMargin, delay: margin.delay, periodS: margin.periodS } : null,
      errorAcf: Array.from(acf.subarray(0, Math.min(acf.length, 400)), (v) => Math.round(v * 1e4) / 1e4),
    },
  };
}

function stretchMask(n: number, stretches: readonly [number, number][]): Uint8Array {
  const m = new Uint8Array(n);
  for (const [s, e] of stretches) m.fill(1, s, e);
  return m;
}

/**
 * A set point that moves all the time (constant-set-point stretches cover less than a quarter of
 * the closed-loop time; ours) leaves no stretch to judge the error on. The error's figures are
 * then taken over the closed-loop stretches with the set point's moves counted as one more
 * disturbance: e = S(q)(r − d) for set point r and disturbance d, and the first b terms of the
 * error's impulse response are fixed by the delay whatever the controller, so the minimum-variance
 * benchmark holds for the error as it does under constant set point (Harris 1989; Desborough &
 * Harris 1992 assess the control error, set point included). The idle index stays on
 * constant-set-point stretches: after a set-point move MV and PV move the same way under any
 * tuning, which is what the index reads as sluggish (Hägglund 1999 evaluates it after load
 * disturbances only).
 */
function setPointWanders(w: { n: number }, stretches: readonly [number, number][], closedCount: number): boolean {
  let covered = 0;
  for (const [s, e] of stretches) covered += e - s;
  return closedCount > 0 && covered < 0.25 * closedCount && closedCount >= 0.25 * w.n;
}

const SP_WANDER_CAUTION =
  "The set point moves nearly all the time (e.g. a cascade slave): the Harris index and the disturbance figures are taken on the control error with the set point's moves counted as one more disturbance; the idle index needs constant-set-point stretches.";
