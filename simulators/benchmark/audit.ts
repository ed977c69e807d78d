/**
 * The simulator's own evidence that a recording is what its label says, from the truth kept
 * beside the samples (never from the samples alone, never from the assessment): a sticking valve
 * really sat still while the MV moved, a saturated loop really spent time at a limit, an outside
 * sinusoid really shows in the PV, and so on. Thresholds are ours (common practice).
 */
import type { BenchRecording } from "./generate";

export interface TruthFigures {
  /** Share of samples where the valve did not move while the controller output did. */
  stuckWhileMoving: number;
  slips: number;
  atLimit: number;
  manual: number;
  fault: number;
  /** Share of samples whose PV reading is outside the configured range. */
  outOfRange: number;
  /** Amplitude (% of span) of the true PV at the outside sinusoid's frequency (0 without one). */
  sinePvAmplitude: number;
  noiseSdPct: number;
  gm: number;
  /** Gain crossover frequency relative to the SIMC (tauC = theta) loop's. */
  bandwidthRatio: number | null;
}

/** Amplitude of x at frequency f (Hz), sampled every T s (a single-bin DFT). */
export function amplitudeAt(x: ArrayLike<number>, T: number, f: number): number {
  let re = 0;
  let im = 0;
  let mean = 0;
  for (let k = 0; k < x.length; k++) mean += x[k]!;
  mean /= x.length;
  for (let k = 0; k < x.length; k++) {
    const ph = 2 * Math.PI * f * k * T;
    re += (x[k]! - mean) * Math.cos(ph);
    im += (x[k]! - mean) * Math.sin(ph);
  }
  return (2 * Math.hypot(re, im)) / x.length;
}

export function truthFigures(rec: BenchRecording): TruthFigures {
  const tr = rec.truth;
  const N = rec.samples.length;
  const [lo, hi] = rec.draw.spec.mvLimitsPct;
  let stuck = 0;
  let atLimit = 0;
  let manual = 0;
  let fault = 0;
  let out = 0;
  for (let k = 0; k < N; k++) {
    if (k > 0 && tr.valvePct[k] === tr.valvePct[k - 1] && tr.mvPct[k] !== tr.mvPct[k - 1]) stuck++;
    // within 1 % of the MV range of a limit: noise through the controller jitters a pinned output
    if (tr.mvPct[k]! <= lo + 0.01 * (hi - lo) || tr.mvPct[k]! >= hi - 0.01 * (hi - lo)) atLimit++;
    const t = rec.samples[k]!.t;
    if (rec.draw.spec.manual.some((s) => t >= s.fromS && t < s.toS)) manual++;
    fault += tr.fault[k]!;
    const pv = rec.samples[k]!.pv;
    if (pv < rec.config.pvLo || pv > rec.config.pvHi) out++;
  }
  const sine = rec.draw.spec.load.sine;
  const { margins, referenceMargins } = rec.draw;
  return {
    stuckWhileMoving: stuck / N,
    slips: tr.slips,
    atLimit: atLimit / N,
    manual: manual / N,
    fault: fault / N,
    outOfRange: out / N,
    sinePvAmplitude: sine ? amplitudeAt(tr.pvTruePct, rec.config.samplePeriodS, 1 / sine.periodS) : 0,
    noiseSdPct: rec.draw.spec.noiseSdPct,
    gm: margins.gm,
    bandwidthRatio: margins.wc !== null && referenceMargins.wc !== null ? margins.wc / referenceMargins.wc : null,
  };
}

/** Problems with a recording against its label (empty when the simulator truth agrees). */
export function auditRecording(rec: BenchRecording): string[] {
  const f = truthFigures(rec);
  const p: string[] = [];
  const need = (ok: boolean, what: string) => {
    if (!ok) p.push(what);
  };
  switch (rec.label) {
    case "healthy":
      need(f.gm >= 2, `gain margin ${f.gm.toFixed(2)} < 2`);
      need(f.atLimit < 0.05 && f.manual <= 0.05 && f.fault === 0 && f.slips === 0 && f.sinePvAmplitude === 0, "a fault of another label is present");
      break;
    case "aggressive-tuning":
      need(f.gm <= 1.8, `gain margin ${f.gm.toFixed(2)} > 1.8`);
      break;
    case "sluggish-tuning":
      need(f.gm >= 4 && f.bandwidthRatio !== null && f.bandwidthRatio <= 0.4, `gain margin ${f.gm.toFixed(1)}, bandwidth ratio ${f.bandwidthRatio?.toFixed(2)}`);
      break;
    case "valve-stiction":
      need(f.stuckWhileMoving >= 0.15 && f.slips >= 20, `valve stuck while MV moved ${(f.stuckWhileMoving * 100).toFixed(0)} %, ${f.slips} slips`);
      break;
    case "external-disturbance":
      need(f.sinePvAmplitude >= 1.5 * f.noiseSdPct, `PV amplitude at the sinusoid ${f.sinePvAmplitude.toFixed(3)} < 1.5 x noise ${f.noiseSdPct.toFixed(3)}`);
      break;
    case "saturated":
      need(f.atLimit >= 0.25, `MV at a limit ${(f.atLimit * 100).toFixed(0)} % of the time`);
      break;
    case "sensor-fault":
      need(f.fault >= 0.1, `faulty readings ${(f.fault * 100).toFixed(0)} % of the time`);
      if (rec.draw.spec.fault?.kind === "out-of-range") need(f.outOfRange >= 0.05, `PV outside its range ${(f.outOfRange * 100).toFixed(0)} % of the time`);
      break;
    case "manual":
      need(f.manual >= 0.6, `in manual ${(f.manual * 100).toFixed(0)} % of the time`);
      break;
    case "undetermined":
      break;
  }
  return p;
}
