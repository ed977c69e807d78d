/**
 * Shapes of the routine-data assessment (the offline `assess` command and, later, the live
 * tracker use the same ones). Units: time in seconds, SP/PV in the loop's engineering units, MV
 * in % of output.
 */
import type { Complex } from "@/lib/control";

export type AssessMode = "auto" | "manual" | "cascade";
export type AssessQuality = "good" | "bad" | "uncertain";

/** One historian sample (irregular spacing allowed). */
export interface AssessSample {
  /** Seconds (any origin; strictly increasing). */
  t: number;
  sp: number;
  pv: number;
  mv: number;
  mode?: AssessMode;
  quality?: AssessQuality;
}

export interface OscillationFigures {
  detected: boolean;
  periodS: number | null;
  /** Thornhill, Huang & Zhang 2003 regularity r (regular when r > 1). */
  regularity: number | null;
  /** Amplitude of the control error's oscillation, PV engineering units. */
  amplitude: number | null;
}

export type StictionVerdict = "likely" | "unlikely" | "undetermined";

export interface StictionFigures {
  verdict: StictionVerdict;
  evidence: string[];
}

export interface DisturbanceResponse {
  poles: Complex[];
  spectralRadius: number | null;
}

export type DiagnosisLabel =
  | "healthy"
  | "aggressive-tuning"
  | "sluggish-tuning"
  | "valve-stiction"
  | "external-disturbance"
  | "saturated"
  | "sensor-fault"
  | "manual"
  | "undetermined";

export interface Diagnosis {
  label: DiagnosisLabel;
  /** 0..1; the evidence lines say "likely ..." and never state a certainty. */
  confidence: number;
  evidence: string[];
  /** For "undetermined": why. */
  reason?: string;
  /** For "undetermined": more data time needed, s (when more data would help). */
  needsS?: number;
}

/** The contract object (names and shapes are checked from outside; extra fields are welcome). */
export interface LoopAssessmentReport {
  samples: number;
  spanS: number;
  serviceFactor: number | null;
  manual: number;
  saturation: number;
  oscillation: OscillationFigures;
  stiction: StictionFigures;
  harrisIndex: number | null;
  spectralRadius: number | null;
  decayRatio: number | null;
  poles: Complex[];
  disturbanceResponse: DisturbanceResponse | null;
  diagnosis: Diagnosis;
  cautions: string[];
  /** Extra figures beyond the contract. */
  details: AssessmentDetails;
}

export interface AssessmentDetails {
  /** Period of the uniform grid the figures were computed on, s. */
  analysisPeriodS: number;
  /** Hägglund 1999 idle index, -1..1 (near +1: sluggish), null when too few load disturbances. */
  idleIndex: number | null;
  /** Hägglund 1995: load disturbances (IAE between zero crossings above the limit) per supervision time. */
  loadDisturbances: { count: number; supervisionS: number; iaeLimit: number; rate: number } | null;
  /** Share of time with quality bad, 0..1. */
  badQuality: number;
  valveTravelPctPerHour: number;
  valveReversalsPerHour: number;
  /** ±3σ of the PV's high-frequency noise, PV engineering units. */
  noiseBand: number;
  compression: CompressionFigures;
  /** Horch 1999 cross-correlation test and He et al. 2007 curve-fit test. */
  stictionTests: StictionTests;
  /** Outside load or sticking valve (load-or-valve.ts): mean time asymmetry of the error's half-cycles (negative: jump then decay; positive: build-up then release), its t, the coefficient of variation of their lengths (small: clock-like) and their count; null when not oscillating or ringing. */
  loadOrValve: { reading: "load" | "leans-load" | "valve" | "neutral" | "withheld"; asymmetry: number | null; tStat: number | null; lengthCv: number | null; halfCycles: number } | null;
  /** Harris index inputs: delay b in samples and the constant-SP samples used. */
  /** extendedIndex: the index at θ + τc with SIMC's tight τc = θ (extended-horizon.ts). */
  harris: { delaySamples: number; samplesUsed: number; periodS: number; extendedIndex: number | null; extendedDelaySamples: number | null } | null;
  /** Oscillation also seen while the loop was in manual (Hägglund's outside-oscillation sign). */
  oscillationInManual: boolean | null;
  /** Period of the error's dominant mode from its ACF zero crossings, s (also when not an oscillation). */
  dominantPeriodS: number | null;
  /** Period of the loop's own dominant oscillating pole, 2π·samplePeriodS/|arg z|, s (null without own poles or a complex one). */
  ownModePeriodS: number | null;
  /** Lag at which the error's ACF falls below 0.37 of its lag-1 value, s (its decorrelation time). */
  errorDecorrelationS: number | null;
  /** Lowest error ACF within 1.5 dominant periods (below about -0.2: the error rings). */
  ringDepth: number | null;
  /** Strongest spectral line of the error: period, s; ordinate over its neighbours' median; share of the error variance; ordinate over its immediate neighbours' mean (spectral-line.ts). */
  spectralLine: { periodS: number; ratio: number; share: number; near: number } | null;
  /** Decay ratio of the dominant disturbance-response pole (period-invariant), null when real. */
  disturbanceDecayRatio: number | null;
  /** Miao–Seborg autocorrelation decay ratio of the differenced error (acf-decay.ts): R ≈ √DR, 0.5 = quarter amplitude; null without a full swing. */
  acfDecay?: { ratio: number; decayRatio: number; periodS: number; depth: number; ratioSd: number } | null;
  /** Step response from the set point's own moves (setpoint-response.ts): apparent dead time, t63 (null: not within the horizon), t63 over the dead time; null when the set point does not move enough. */
  setPointResponse?: { deadTimeS: number; t63S: number | null; horizonS: number; ratio: number; lowerBound: boolean; shortOfMove: boolean; strength: number; overshoot?: number | null; overshootSe?: number | null } | null;
  /** The error's ACF never swings back within the record while the set point holds (error-wander.ts); null otherwise. */
  errorWander?: { crossings: number; firstZeroS: number; firstZeroShare: number } | null;
  /** Sensitivity peak of the process identified in closed loop with the configured controller (loop-margin.ts); null when not computed. */
  loopMargin?: { ms: number; msLower: number; gainMargin: number | null; delay: number; periodS: number } | null;
  /** Time constant of the slowest disturbance-response pole over the configured dead time (null without a dead time): about 1–3 for tuning at τc = θ to a few θ (Skogestad 2003). */
  disturbanceTimeToDeadTime: number | null;
  /** Autocorrelation of the control error (first lags, at analysisPeriodS), for the evidence plot. */
  errorAcf: number[];
}

export interface CompressionFigures {
  compressed: boolean;
  /** Share of PV samples equal to the previous one. */
  repeatShare: number;
  /** Share of PV samples on a straight line through their neighbours (interpolated between stored points). */
  linearShare: number;
  /** Share of the grid's sample times that fall between stored points and are interpolated (points stored by exception, with their own times). */
  interpolatedShare: number;
  /** Quantisation step over the noise sigma (large: coarse levels). */
  quantisationRatio: number | null;
  /** Median sample spacing over the loop's sample period. */
  spacingRatio: number;
  reasons: string[];
}

export interface StictionTests {
  crossCorrelation: { applicable: boolean; oddness: number | null; signal: "pv" | "pv-increments"; note: string };
  curveFit: { applicable: boolean; index: number | null; signal: "mv" | "pv"; note: string };
  /** Jelali 2008 model fit: residual of the best sticking valve over a linear one (<= 1), and its S, J in % of output. */
  modelFit: { applicable: boolean; residualRatio: number | null; bandPct: number | null; jumpPct: number | null; note: string };
}
