/**
 * Offline identification of a step test: the plant MV -> PV as an ARX model with order and
 * delay chosen from the data, its continuous equivalents, and the proposed estimation period
 * and model structure for the loop's live tracker.
 *
 * Method:
 * 1. Resample the log to its own period (resample.ts) and remove the operating point.
 * 2. A first-order-plus-dead-time model is fitted to the log by output error (fopdt.ts); its
 *    dead time centres the delay search of the ARX fits (nk within +-max(3, 30 %) around it).
 *    A first ARX fit (na, nb in 1..2; Ljung, *System Identification*, 2nd ed., 1999, sec. 16.4)
 *    at the logged period (averaged down if the log is long) gives the dominant dynamics, from
 *    which `proposeEstimationPeriod` (lib/control) picks the estimation period for the loop's
 *    telemetry period (rule of thumb wn T 0.1-0.6); modes slower than twice the record (an
 *    integrator) are left out of that choice.
 * 3. The model is fitted again at that period (na, nb in 1..3, the delay searched again) so the
 *    proposed structure (na, nb, nk) is in the units the tracker uses; repeated once more if the
 *    proposal moves. Among candidates whose FPE is within 2 % of the best, the one with the fewest
 *    parameters is kept (the parsimony principle, Ljung 1999 sec. 16.8).
 * 4. Continuous equivalents: a first-order-plus-dead-time model (gain, time constant, dead
 *    time) fitted to the logged MV and PV by output error (fopdt.ts), the gain also in %/% of
 *    span with the loop's PV and MV spans; the ARX static gain B(1)/A(1); each ARX pole's time
 *    constant or (zeta, wn) through `poleCharacteristics`.
 */
import {
  ControlArgumentError,
  fitArx,
  poleCharacteristics,
  polyRoots,
  proposeEstimationPeriod,
  type ArxCandidate,
  type ArxFit,
  type ArxModel,
  type Complex,
  type PeriodProposal,
} from "@/lib/control";
import { ValidationError } from "@/lib/domain/errors";
import { chartOfFit } from "./chart";
import type { ParsedStepTest } from "./csv";
import { fitFopdt, fitIpdt, type FopdtFit, type IpdtFit } from "./fopdt";
import { detrend, loggedPeriod, resample, type UniformSeries } from "./resample";
import { RESULT_VERSION, type IdentifyOptions, type LoopForIdentification, type PoleSummary, type StepTestResult } from "./result";

export { CHART_POINTS, RESULT_VERSION, type IdentifyOptions, type LoopForIdentification, type PoleSummary, type StepTestResult } from "./result";

/** FPE within this fraction of the best counts as "as good" for the parsimony rule. */
const PARSIMONY = 0.02;
/** Fewest samples at the identification period. */
const MIN_ID_SAMPLES = 40;

interface Pass {
  T: number;
  fit: ArxFit;
  series: UniformSeries;
  u: Float64Array;
  y: Float64Array;
  yTrend: Float64Array;
  leadIn: number;
  baseline: { mv: number; pv: number };
}

/**
 * Identify the plant from a parsed step test. Units: seconds; gains in PV units per MV unit
 * unless named "percent".
 * @throws ValidationError (422) when the data cannot support identification (no MV move, too
 *   short a record for the dynamics), with a message that says why.
 */
export function identifyStepTest(parsed: ParsedStepTest, loop: LoopForIdentification, options: IdentifyOptions = {}): StepTestResult {
  const rows = parsed.rows;
  const warnings = [...parsed.warnings];
  const method = options.detrend ?? "initial";
  const spans = { mv: loop.mvHi - loop.mvLo, pv: loop.pvHi - loop.pvLo };
  const { T: T0, irregular } = loggedPeriod(rows);
  if (irregular) warnings.push(`Irregular time stamps: more than 5 % of the steps differ from the median ${fmt(T0)} s by over a quarter; the log was resampled.`);
  const duration = rows[rows.length - 1]!.t;
  const base = resample(rows, T0);
  let mvMin = Infinity;
  let mvMax = -Infinity;
  for (const v of base.mv) {
    mvMin = Math.min(mvMin, v);
    mvMax = Math.max(mvMax, v);
  }
  if (!(mvMax - mvMin > 0.001 * spans.mv)) {
    throw new ValidationError(`The MV does not move in this log (range ${fmt(mvMax - mvMin)} in a span of ${fmt(spans.mv)}); a step test needs at least one MV step.`);
  }
  const modes = parsed.hasMode ? { auto: 0, manual: 0, cascade: 0 } : null;
  if (modes) for (const m of base.mode) if (m) modes[m]++;
  // Without a mode column, moving set points mean SP steps in auto.
  const spMoves = base.sp !== null && base.sp.some((v) => Math.abs(v - base.sp![0]!) > 0.002 * spans.pv);
  const closedLoop = modes ? modes.auto + modes.cascade > modes.manual : spMoves;
  if (closedLoop) {
    warnings.push("Most of the log is in auto or cascade: the plant was identified from closed-loop data, which ARX fits without bias only when the equation error is white (Ljung 1999, sec. 13.4). An open-loop test in manual gives the cleaner model.");
  }
  const maxDead = options.maxDeadTimeS ?? duration / 3;
  const d1 = Math.max(1, Math.ceil(duration / T0 / 3000));

  // FOPDT summary by output error on the finest series (the logged period, averaged down when long).
  const T1 = T0 * d1;
  const fineSeries = T1 === T0 ? base : resample(rows, T1);
  const fine = detrend(fineSeries, method, spans);
  const fo = fitFopdt(fine.u, fine.y, T1, maxDead);

  const runPass = (T: number, orders: number[]): Pass => {
    const series = T === T0 ? base : resample(rows, T);
    const n = series.mv.length;
    if (n < MIN_ID_SAMPLES / 2) throw new ValidationError(`The record is too short: ${n} samples at ${fmt(T)} s.`);
    const d = detrend(series, method, spans);
    const kMax = Math.max(1, Math.min(Math.floor(maxDead / T) + 2, Math.floor(n / 4), 150));
    // Delays searched: around the FOPDT dead time when there is one (nk = whole periods + 1 for
    // ZOH), else 1..kMax.
    let k0 = 1;
    let k1 = kMax;
    if (fo) {
      const centre = Math.floor(fo.deadTimeS / T + 1e-9) + 1;
      const w = Math.max(3, Math.ceil((0.3 * fo.deadTimeS) / T));
      k0 = Math.max(1, Math.min(kMax, centre - w));
      k1 = Math.max(k0, Math.min(kMax, centre + w));
    }
    const nks = Array.from({ length: k1 - k0 + 1 }, (_, i) => k0 + i);
    let all: ArxFit;
    try {
      all = fitArx(d.u, d.y, { T, na: orders, nb: orders, nk: nks, criterion: "fpe", removeMeans: false });
    } catch (e) {
      if (e instanceof ControlArgumentError) throw new ValidationError(`The data do not support identification: ${e.message}.`);
      throw e;
    }
    const chosen = parsimonious(all.candidates);
    const fit = chosen.na === all.model.a.length && chosen.nb === all.model.b.length && chosen.nk === all.model.nk
      ? all
      : fitArx(d.u, d.y, { T, na: chosen.na, nb: chosen.nb, nk: chosen.nk, criterion: "fpe", removeMeans: false });
    return { T, fit: { ...fit, candidates: all.candidates }, series, u: d.u, y: d.y, yTrend: d.yTrend, leadIn: d.leadIn, baseline: d.baseline };
  };
  // Modes slower than twice the record (an integrator, or a lag the test cannot resolve) are not
  // the mode to choose the period for; an integrating plant's open-loop pole at z = 1 is its nature.
  const slowLimit = 2 * duration;
  const propose = (m: ArxModel): PeriodProposal | null => {
    const poles = polyRoots([1, ...m.a]).filter((z) => !isSlow(z, m.T, slowLimit));
    if (poles.length === 0) return null;
    try {
      return proposeEstimationPeriod({ from: "discrete-poles", poles, T: m.T, telemetryPeriod: loop.telemetryPeriodS });
    } catch (e) {
      if (e instanceof ControlArgumentError) return null;
      throw e;
    }
  };
  /** The identification period for a proposed one: never finer than the log, never so coarse that too few samples remain. */
  const periodFor = (p: number): number => {
    let T = Math.max(p, T0);
    if (duration / T < MIN_ID_SAMPLES) T = Math.max(T0, T0 * Math.floor(duration / (MIN_ID_SAMPLES * T0)));
    return T;
  };

  const passes: Pass[] = [];
  passes.push(runPass(T1, [1, 2]));
  // Iterate: identify at the proposed period until the model there proposes (nearly) the same.
  let target = propose(passes[0]!.fit.model);
  let finalOwn: PeriodProposal | null = target;
  if (target) {
    for (let i = 0; i < 3; i++) {
      const T = periodFor(target.period);
      passes.push(runPass(T, [1, 2, 3]));
      finalOwn = propose(passes[passes.length - 1]!.fit.model);
      if (!finalOwn || T !== target.period) break;
      if (Math.abs(finalOwn.factor - target.factor) <= 0.2 * target.factor) break;
      if (i === 2) {
        warnings.push(`The proposed period did not settle (${fmt(target.period)} s, then ${fmt(finalOwn.period)} s); treat it as approximate.`);
        break;
      }
      target = finalOwn;
    }
  } else {
    warnings.push("No mode faster than the record was found: no estimation period is proposed. A longer test, or one with more moves, may resolve the dynamics.");
  }
  const final = passes[passes.length - 1]!;
  const model = final.fit.model;
  if (target && Math.abs(final.T - target.period) > 1e-9 * target.period) {
    warnings.push(`The model was identified at ${fmt(final.T)} s, not at the proposed ${fmt(target.period)} s (the log is sampled too slowly or is too short); the proposed delay is converted.`);
  }
  if (final.fit.fit < 60) warnings.push(`The model explains the PV poorly (fit ${fmt(final.fit.fit)} %): the step may be too small against the noise, or disturbances moved the PV during the test.`);

  const integrating = (fo !== null && fo.timeConstantS > slowLimit) || polyRoots([1, ...model.a]).some((z) => isSlow(z, model.T, slowLimit));
  const ip = integrating ? fitIpdt(fine.u, fine.y, T1, maxDead) : null;
  const continuous = continuousEquivalents(model, fo, spans, ip);
  if (integrating) {
    warnings.push(
      "The PV keeps ramping after an MV step: the process integrates (a level, for instance) or is slower than the record can show. Gain and time constant are replaced by the ramp rate; an open-loop pole at z = 1 is the nature of such a process, not an alarm.",
    );
  }
  let proposal: StepTestResult["proposal"] = null;
  if (target) {
    const nk = Math.abs(final.T - target.period) <= 1e-9 * target.period
      ? model.nk
      : Math.max(1, Math.floor(((model.nk - 1) * final.T) / target.period + 1e-9) + 1);
    // wn of the final model's dominant mode at the proposed period.
    const wn = finalOwn ? finalOwn.wnT / finalOwn.period : target.wnT / target.period;
    const wnT = wn * target.period;
    const inBand = wnT >= 0.1 && wnT <= 0.6;
    if (!inBand) {
      warnings.push(
        `At the proposed ${fmt(target.period)} s the identified dominant mode has wn T = ${fmt(wnT)}, outside 0.1-0.6: ${wnT < 0.1 ? "the log or the telemetry cannot be averaged enough" : "the telemetry is already slow for this mode"}.`,
      );
    }
    proposal = {
      estimationPeriodS: target.period,
      factor: target.factor,
      telemetryPeriodS: loop.telemetryPeriodS,
      wnT,
      reason:
        `Averaging ${target.factor} telemetry sample${target.factor === 1 ? "" : "s"} of ${fmt(loop.telemetryPeriodS)} s gives ${fmt(target.period)} s, ` +
        `where the identified dominant mode (wn = ${fmt(wn)} rad/s) has wn T = ${fmt(wnT)}, ${inBand ? "inside" : "outside"} the band 0.1-0.6 ` +
        `(rule of thumb, Åström & Wittenmark 1997).`,
      modelStructure: { na: model.a.length, nb: model.b.length, nk },
    };
  }

  const chart = chartOfFit({ model, final, fine, fineSeries, T1, fo, ip });

  return {
    version: RESULT_VERSION,
    data: {
      rows: rows.length,
      periodS: T0,
      durationS: duration,
      startTime: parsed.startTime,
      irregular,
      hasSp: parsed.hasSp,
      modes,
      closedLoop,
      detrend: method,
      baseline: final.baseline,
      leadInS: final.leadIn * final.T,
    },
    identification: {
      periodS: final.T,
      samples: final.fit.samplesUsed,
      criterion: "fpe",
      model,
      fitPercent: final.fit.fit,
      loss: final.fit.loss,
      candidates: final.fit.candidates,
      passes: passes.map((p) => ({ periodS: p.T, na: p.fit.model.a.length, nb: p.fit.model.b.length, nk: p.fit.model.nk, fitPercent: p.fit.fit })),
    },
    continuous,
    proposal,
    chart,
    warnings,
  };
}

/** The candidate with the fewest parameters among those within PARSIMONY of the best FPE. */
function parsimonious(cands: ArxCandidate[]): ArxCandidate {
  const ok = cands.filter((c) => Number.isFinite(c.criterionValue) && !c.error);
  if (ok.length === 0) throw new ValidationError("The data do not support identification: no model structure could be fitted.");
  const best = Math.min(...ok.map((c) => c.criterionValue));
  const near = ok.filter((c) => c.criterionValue <= best * (1 + PARSIMONY));
  near.sort((a, b) => a.na + a.nb - (b.na + b.nb) || a.criterionValue - b.criterionValue);
  return near[0]!;
}

/** Continuous equivalents: the FOPDT summary, the ARX static gain and each ARX pole (see the module doc). */
export function continuousEquivalents(
  model: ArxModel,
  fo: FopdtFit | null,
  spans: { mv: number; pv: number },
  ip: IpdtFit | null = null,
): StepTestResult["continuous"] {
  const T = model.T;
  const den = [1, ...model.a];
  const poles = polyRoots(den).map((z): PoleSummary => {
    const c = poleCharacteristics(z, T);
    const cont = c.continuousEquivalent && c.kind !== "integrator";
    return { re: z.re, im: z.im, radius: c.radius, kind: c.kind, timeConstantS: c.timeConstant, wn: cont ? c.wn : null, zeta: cont ? c.zeta : null };
  });
  const a1 = den.reduce((s, v) => s + v, 0);
  const b1 = model.b.reduce((s, v) => s + v, 0);
  const stable = poles.every((p) => p.radius < 1 - 1e-6);
  const arxGain = stable && Math.abs(a1) > 1e-9 ? b1 / a1 : null;
  if (ip) {
    const rate = ip.rate;
    return {
      gain: null,
      gainPercent: null,
      arxGain: null,
      integrating: true,
      rate,
      ratePercent: (rate * spans.mv) / spans.pv,
      timeConstantS: null,
      deadTimeS: ip.deadTimeS,
      fopdtFitPercent: ip.fitPercent,
      method: "integrating process: integrator plus dead time fitted to the logged MV and PV by output error (exact ZOH simulation); poles from the ARX model",
      poles,
    };
  }
  const gain = fo ? fo.gain : arxGain;
  return {
    gain,
    gainPercent: gain === null ? null : (gain * spans.mv) / spans.pv,
    arxGain,
    integrating: false,
    rate: null,
    ratePercent: null,
    timeConstantS: fo ? fo.timeConstantS : null,
    deadTimeS: fo ? fo.deadTimeS : null,
    fopdtFitPercent: fo ? fo.fitPercent : null,
    method:
      "first order plus dead time fitted to the logged MV and PV by output error (exact ZOH simulation, Åström & Wittenmark 1997 sec. 2.3); poles from the ARX model",
    poles,
  };
}

/** A real pole on or beyond z = 1, or a lag slower than `limit` seconds (-T/ln z > limit). */
function isSlow(z: Complex, T: number, limit: number): boolean {
  const r = Math.hypot(z.re, z.im);
  if (Math.abs(z.im) > 1e-12 * Math.max(1, r) || z.re <= 0) return r >= 1;
  return z.re >= 1 || -T / Math.log(z.re) > limit;
}

function fmt(x: number): string {
  return Number(x.toPrecision(3)).toString();
}
