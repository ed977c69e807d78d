/**
 * The worst-loops score: reproducible from the daily summaries, stated on every report that
 * ranks by it. Pure and browser-safe.
 *
 *   score = 100 × (criticality / 3) × Σ w_i × term_i,  each term in [0, 1]
 *
 *   rim         0.25  max((DR − 0.25) / 0.75, u / 0.25): DR the period's mean decay ratio while
 *                     tracking (quarter-amplitude damping, DR 0.25, is the classical tuning target:
 *                     common practice), u the share of estimates with the spectral radius ≥ 1
 *   finding     0.15  confidence of the routine-data finding when it is engineering work (a label
 *                     other than healthy or not judged yet, confidence above 0.6: what opens a
 *                     work-list item, lib/domain/findings.ts), else 0
 *   oscillation 0.10  oscillation index of the assessment (0..1)
 *   stiction    0.10  likelihood of a sticking valve from the assessment (0..1)
 *   harris      0.10  max(0, 1 − η / η_kind): η = 1 / Harris index, the share of the error's
 *                     variance that the dead time makes unavoidable (Desborough & Harris 1992's
 *                     performance index, 0..1, 1 = minimum variance), against a benchmark per
 *                     loop kind. The assessment and the daily summaries keep the Harris index
 *                     itself (σ² / σ²_mv ≥ 1, "variance 4× the minimum"; lib/assessment/harris.ts):
 *                     one definition, turned into η here only.
 *   service     0.10  (1 − service factor) / 0.2: 20 % of the time out of the designed mode counts full
 *   alarm       0.10  (share of time with an operator alarm of the loop active) / 0.1
 *   saturation  0.10  (share of time with the output at a limit) / 0.2
 *
 * The weights are our choice, stated so the ranking is reproducible; a term whose figure is not
 * available (a loop the routine-data assessment has not judged yet, or a Harris index without a
 * configured dead time) counts 0 and the report says so.
 * Criticality 1..5 is set by the engineer per loop (3 = normal, weight 1).
 */
import { FINDING_WORDS, findingPhrase, opensWorkItem } from "@/lib/domain/findings";

export const SCORE_WEIGHTS = { rim: 0.25, finding: 0.15, oscillation: 0.1, stiction: 0.1, harris: 0.1, service: 0.1, alarm: 0.1, saturation: 0.1 } as const;
export type ScoreTerm = keyof typeof SCORE_WEIGHTS;

/**
 * Harris-index benchmarks per kind (η of a well-tuned loop). Averaging level loops are detuned on
 * purpose (surge capacity), so their η is low by design and their benchmark is low too. Values are
 * rules of thumb from memory of the control-performance-monitoring literature (e.g. Jelali 2006
 * surveys similar per-kind figures), not a standard: treat as adjustable defaults.
 */
export const HARRIS_BENCHMARK: Record<string, number> = {
  flow: 0.5,
  pressure: 0.5,
  temperature: 0.4,
  composition: 0.3,
  level: 0.1,
  other: 0.4,
};

export const DIAGNOSIS_LABELS = [
  "healthy",
  "aggressive-tuning",
  "sluggish-tuning",
  "valve-stiction",
  "external-disturbance",
  "saturated",
  "sensor-fault",
  "manual",
  "undetermined",
] as const;
export type DiagnosisLabel = (typeof DIAGNOSIS_LABELS)[number];

/** One loop-day as stored in loop_daily_summaries (shares 0..1, null = not available). */
export interface DaySummary {
  loopId: number;
  /** UTC day, YYYY-MM-DD. */
  day: string;
  minutes: number;
  radiusMean: number | null;
  radiusMax: number | null;
  decayRatioMax: number | null;
  decayRatioMean: number | null;
  unstableShare: number | null;
  alarmShare: number | null;
  manualShare: number | null;
  saturationShare: number | null;
  serviceFactor: number | null;
  trackerState: string | null;
  diagnosisLabel: string;
  diagnosisConfidence: number | null;
  oscillationIndex: number | null;
  stictionLikelihood: number | null;
  harrisIndex: number | null;
}

/** A loop's figures over a period, minute-weighted from its days: a day's figures less those of one day only. */
export type PeriodFigures = Omit<DaySummary, "loopId" | "day" | "radiusMean" | "trackerState">;

function weighted(days: DaySummary[], pick: (d: DaySummary) => number | null): number | null {
  let w = 0;
  let s = 0;
  for (const d of days) {
    const v = pick(d);
    if (v == null || !Number.isFinite(v) || d.minutes <= 0) continue;
    w += d.minutes;
    s += v * d.minutes;
  }
  return w > 0 ? s / w : null;
}

function maxOf(days: DaySummary[], pick: (d: DaySummary) => number | null): number | null {
  let m: number | null = null;
  for (const d of days) {
    const v = pick(d);
    if (v != null && Number.isFinite(v) && (m === null || v > m)) m = v;
  }
  return m;
}

/** Combine a loop's days (any order) into period figures; the label is that of the latest judged day. */
export function combineDays(days: DaySummary[]): PeriodFigures {
  const sorted = [...days].sort((a, b) => a.day.localeCompare(b.day));
  const judged = sorted.filter((d) => d.diagnosisLabel !== "undetermined").at(-1);
  return {
    minutes: sorted.reduce((a, d) => a + d.minutes, 0),
    radiusMax: maxOf(sorted, (d) => d.radiusMax),
    decayRatioMax: maxOf(sorted, (d) => d.decayRatioMax),
    decayRatioMean: weighted(sorted, (d) => d.decayRatioMean),
    unstableShare: weighted(sorted, (d) => d.unstableShare),
    alarmShare: weighted(sorted, (d) => d.alarmShare),
    manualShare: weighted(sorted, (d) => d.manualShare),
    saturationShare: weighted(sorted, (d) => d.saturationShare),
    serviceFactor: weighted(sorted, (d) => d.serviceFactor),
    diagnosisLabel: judged?.diagnosisLabel ?? "undetermined",
    diagnosisConfidence: judged?.diagnosisConfidence ?? null,
    oscillationIndex: weighted(sorted, (d) => d.oscillationIndex),
    stictionLikelihood: weighted(sorted, (d) => d.stictionLikelihood),
    harrisIndex: weighted(sorted, (d) => d.harrisIndex),
  };
}

const clamp01 = (v: number) => Math.min(1, Math.max(0, v));

/**
 * The finding term: the confidence of a finding that is engineering work (it opens a work-list
 * item: `opensWorkItem`), 0 for a healthy loop or a finding too unsure for a work item, null for a
 * loop not judged yet (counted as missing).
 */
function findingTerm(label: string, confidence: number | null): number | null {
  if (label === "undetermined" || confidence == null) return null;
  if (!(DIAGNOSIS_LABELS as readonly string[]).includes(label)) return null;
  return opensWorkItem({ label: label as DiagnosisLabel, confidence }) ? confidence : 0;
}

/** A diagnosis label as the console words it ("sticking valve"); an unknown label as it is. */
export const findingWord = (label: string): string => (label in FINDING_WORDS ? FINDING_WORDS[label as DiagnosisLabel] : label);

/**
 * η of a Harris index (σ²_mv / σ², Desborough & Harris 1992): 1 at minimum variance, towards 0 as
 * the variance grows. Null when there is no index; an index below 1 (sampling error of a loop at
 * minimum variance) reads 1.
 */
export function harrisEta(harrisIndex: number | null): number | null {
  if (harrisIndex == null || !Number.isFinite(harrisIndex) || harrisIndex <= 0) return null;
  return Math.min(1, 1 / harrisIndex);
}

export interface LoopScore {
  score: number;
  terms: Record<ScoreTerm, number>;
  /** Terms whose figure was not available (counted 0). */
  missing: ScoreTerm[];
  /** Evidence lines, largest contribution first, e.g. "decay ratio up to 0.82 (rim term 0.82)". */
  evidence: string[];
}

/** The score of one loop over a period (see the header for the formula). */
export function scoreLoop(f: PeriodFigures, kind: string, criticality: number): LoopScore {
  const missing: ScoreTerm[] = [];
  const term = (name: ScoreTerm, v: number | null): number => {
    if (v == null || !Number.isFinite(v)) {
      missing.push(name);
      return 0;
    }
    return clamp01(v);
  };
  const rimRaw = f.decayRatioMean == null && f.unstableShare == null ? null : Math.max(((f.decayRatioMean ?? 0.25) - 0.25) / 0.75, (f.unstableShare ?? 0) / 0.25);
  const bench = HARRIS_BENCHMARK[kind] ?? HARRIS_BENCHMARK.other!;
  const eta = harrisEta(f.harrisIndex);
  const terms: Record<ScoreTerm, number> = {
    rim: term("rim", rimRaw),
    finding: term("finding", findingTerm(f.diagnosisLabel, f.diagnosisConfidence)),
    oscillation: term("oscillation", f.oscillationIndex),
    stiction: term("stiction", f.stictionLikelihood),
    harris: term("harris", eta == null ? null : 1 - eta / bench),
    service: term("service", f.serviceFactor == null ? null : (1 - f.serviceFactor) / 0.2),
    alarm: term("alarm", f.alarmShare == null ? null : f.alarmShare / 0.1),
    saturation: term("saturation", f.saturationShare == null ? null : f.saturationShare / 0.2),
  };
  const crit = Math.min(5, Math.max(1, Math.round(criticality)));
  const sum = (Object.keys(SCORE_WEIGHTS) as ScoreTerm[]).reduce((a, k) => a + SCORE_WEIGHTS[k] * terms[k], 0);
  const score = Math.round(100 * (crit / 3) * sum * 10) / 10;
  const pct = (v: number | null) => (v == null ? "–" : `${(100 * v).toFixed(1)} %`);
  const lines: [number, string][] = [
    [
      SCORE_WEIGHTS.rim * terms.rim,
      `decay ratio ${f.decayRatioMean == null ? "–" : f.decayRatioMean.toFixed(2)} on average (up to ${f.decayRatioMax == null ? "–" : f.decayRatioMax.toFixed(2)})` +
        (f.unstableShare ? `; beyond the unit circle in ${(100 * f.unstableShare).toFixed(1)} % of estimates` : ""),
    ],
    [SCORE_WEIGHTS.service * terms.service, `out of the designed mode ${pct(f.serviceFactor == null ? null : 1 - f.serviceFactor)} of the time`],
    [SCORE_WEIGHTS.saturation * terms.saturation, `output at a limit ${pct(f.saturationShare)} of the time`],
    [SCORE_WEIGHTS.alarm * terms.alarm, `an operator alarm active ${pct(f.alarmShare)} of the time`],
    [SCORE_WEIGHTS.finding * terms.finding, `finding: ${findingPhrase({ label: f.diagnosisLabel as DiagnosisLabel, confidence: f.diagnosisConfidence ?? 0, needsS: null })} (confidence ${f.diagnosisConfidence?.toFixed(2)})`],
    [SCORE_WEIGHTS.oscillation * terms.oscillation, `likely oscillating (index ${f.oscillationIndex?.toFixed(2)})`],
    [SCORE_WEIGHTS.stiction * terms.stiction, `likely sticking valve (${f.stictionLikelihood?.toFixed(2)})`],
    [SCORE_WEIGHTS.harris * terms.harris, `variance ${f.harrisIndex?.toFixed(1)}× the minimum the dead time allows (Harris index; eta ${eta?.toFixed(2)} against ${bench} for a ${kind} loop)`],
  ];
  const evidence = lines
    .filter(([c]) => c > 0.005)
    .sort((a, b) => b[0] - a[0])
    .map(([, s]) => s);
  return { score, terms, missing, evidence };
}

/** The formula as printed on the report (screen, CSV and PDF). */
export const SCORE_FORMULA_LINES = [
  "Score = 100 x (criticality / 3) x (0.25*rim + 0.15*finding + 0.10*oscillation + 0.10*stiction + 0.10*Harris + 0.10*service + 0.10*alarm + 0.10*saturation); every term clipped to 0..1.",
  "finding = the confidence of the routine-data finding when it is engineering work (a cause other than healthy, confidence above 0.6: what opens a work-list item), else 0.",
  "rim = max((mean decay ratio while tracking - 0.25) / 0.75, share of estimates with spectral radius >= 1 / 0.25); service = (1 - service factor) / 0.2; alarm = share of time in alarm / 0.1; saturation = share of time at an output limit / 0.2.",
  "Harris = max(0, 1 - eta/eta_kind), eta = 1 / Harris index (1 = minimum variance), with eta_kind: flow 0.5, pressure 0.5, temperature 0.4, composition 0.3, level 0.1 (averaging level loops run slow by design).",
  "The finding, oscillation, stiction, the Harris index and the diagnosis come from the loop's routine-data assessment (the latest of each day); a loop not judged yet counts 0 for them and reads 'not judged yet', and the Harris index needs the loop's dead time.",
];
