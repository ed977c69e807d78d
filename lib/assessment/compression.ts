/**
 * Signs that the export is not the loop's raw signal: historian compression (swinging-door or
 * dead-band storage, replayed by linear interpolation or by holding the last value), coarse
 * quantisation, and stale repeats. Compression fakes stick-slip shapes and lowers variances
 * (Thornhill, Choudhury & Shah, "The impact of compression on data-driven process analyses",
 * J. Process Control 14, 2004 — from memory), so stiction and Harris figures are withheld on
 * compressed data. Thresholds are ours.
 */
import type { LoopConfig } from "./config";
import type { AssessSample, CompressionFigures } from "./types";

/** More than this share of repeated or collinear PV samples reads as compressed/stale. */
const REPEAT_LIMIT = 0.3;
const LINEAR_LIMIT = 0.3;
/** At least this share of spacings within 10 % of the median makes a fixed-interval export. */
const REGULAR_SHARE = 0.9;
/** Fewer distinct PV steps than this read as quantised. */
const QUANTISED_STEPS = 64;

/**
 * `interpolatedShare`: the window's share of grid points that lie between stored points (window.ts).
 * An export of the points a historian stored by exception, with their own times, shows no
 * straight lines itself: they appear when it is replayed on the grid, so the share of made-up
 * grid points is the same sign as `linearShare` on an export the historian already interpolated,
 * read against the same limit.
 */
export function detectCompression(samples: readonly AssessSample[], config: LoopConfig, rawSpacing: number, pvNoisePct: number, interpolatedShare = 0): CompressionFigures {
  const n = samples.length;
  const span = config.pvHi - config.pvLo;
  let repeats = 0;
  let linear = 0;
  let pairs = 0;
  let triples = 0;
  let minStep = Infinity;
  const steps = new Set<number>();
  for (let i = 1; i < n; i++) {
    const a = samples[i - 1]!;
    const b = samples[i]!;
    if (!Number.isFinite(a.pv) || !Number.isFinite(b.pv)) continue;
    pairs++;
    const d = Math.abs(b.pv - a.pv);
    if (d === 0) repeats++;
    else {
      if (d < minStep) minStep = d;
      // Only "fewer than QUANTISED_STEPS distinct steps" is used: counting stops there (the set only grows).
      if (steps.size < QUANTISED_STEPS) steps.add(Number(d.toPrecision(6)));
    }
    if (i >= 2) {
      const z = samples[i - 2]!;
      if (!Number.isFinite(z.pv)) continue;
      triples++;
      // Collinear in time (not merely equal): the stored points were joined by straight lines.
      const slope1 = (a.pv - z.pv) / (a.t - z.t);
      const slope2 = (b.pv - a.pv) / (b.t - a.t);
      if (slope1 !== 0 && Math.abs(slope1 - slope2) <= 1e-9 * (Math.abs(slope1) + Math.abs(slope2)) + 1e-12 * span) linear++;
    }
  }
  const repeatShare = pairs ? repeats / pairs : 0;
  const linearShare = triples ? linear / triples : 0;
  // Quantisation: the smallest PV step over the noise sigma, when few distinct steps occur.
  const noise = (pvNoisePct * span) / 100;
  const quantisationRatio = Number.isFinite(minStep) && noise > 0 && steps.size < QUANTISED_STEPS ? minStep / noise : null;
  const spacingRatio = rawSpacing / config.samplePeriodS;
  // A fixed-interval export (nearly every spacing within 10 % of the median) is a sampled signal,
  // snapshots at a coarser period than the loop's, not compression: what a historian's storage
  // does to a fixed-interval export shows as repeats or straight lines (the rules above), so wide
  // spacing counts as compression only when the stored points are irregular (ours).
  let onStep = 0;
  for (let i = 1; i < n; i++) if (Math.abs(samples[i]!.t - samples[i - 1]!.t - rawSpacing) <= 0.1 * rawSpacing) onStep++;
  const fixedInterval = n > 1 && onStep >= REGULAR_SHARE * (n - 1);
  const reasons: string[] = [];
  if (repeatShare > REPEAT_LIMIT) reasons.push(`${pct(repeatShare)} of PV samples repeat the previous value (held or stale data)`);
  if (linearShare > LINEAR_LIMIT) reasons.push(`${pct(linearShare)} of PV samples lie on straight lines between stored points (interpolated compressed data)`);
  else if (interpolatedShare > LINEAR_LIMIT) reasons.push(`${pct(interpolatedShare)} of the loop's sample times fall between stored points and are interpolated (points stored by exception)`);
  if (quantisationRatio !== null && quantisationRatio > 2) reasons.push(`the PV moves in steps of ${minStep.toPrecision(3)} ${config.units}, ${quantisationRatio.toFixed(1)}× its noise (coarse quantisation)`);
  if (spacingRatio > 3 && !fixedInterval) reasons.push(`stored points are ${spacingRatio.toFixed(1)}× the loop's sample period apart, at irregular times`);
  return { compressed: reasons.length > 0, repeatShare, linearShare, interpolatedShare, quantisationRatio, spacingRatio, reasons };
}

function pct(v: number): string {
  return `${(100 * v).toFixed(0)} %`;
}
