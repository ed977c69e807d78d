/**
 * Per-recording figures of `bench:assess` for studying misses: `--evidence` prints the misses'
 * evidence lines and the figures the diagnosis weighed; `--dump FILE` writes one JSON line per
 * recording (study and DEV sets only: FROZEN's and HOLDOUT's recordings are never written out).
 */
import { appendFileSync } from "node:fs";
import type { LoopAssessmentReport } from "@/lib/assessment";

/** The figures the diagnosis weighs, rounded for reading. */
export function keyFigures(r: LoopAssessmentReport, config: { deadTimeS?: number | null }): Record<string, unknown> {
  const d = r.details;
  const n = (v: number | null | undefined, digits = 3) => (v === null || v === undefined || !Number.isFinite(v) ? null : Number(v.toPrecision(digits)));
  return {
    dead: config.deadTimeS ?? null,
    osc: r.oscillation.detected,
    period: n(d.dominantPeriodS),
    reg: n(r.oscillation.regularity),
    ring: n(d.ringDepth),
    overshoot: d.ringDepth !== null ? n(Math.max(0, -d.ringDepth / Math.max(d.errorAcf[1] ?? 0, 0.05))) : null,
    compressed: d.compression.compressed,
    spWander: r.cautions.some((c) => c.startsWith("The set point moves nearly all the time")),
    harris: n(r.harrisIndex),
    harrisExt: n(d.harris?.extendedIndex),
    tauDead: n(d.disturbanceTimeToDeadTime),
    idle: n(d.idleIndex),
    acfR: d.acfDecay ? n(d.acfDecay.ratio) : null,
    acfSd: d.acfDecay ? n(d.acfDecay.ratioSd) : null,
    // the set-point response (a sluggishness sign of its own since the set-point round)
    spRatio: d.setPointResponse ? n(d.setPointResponse.ratio) : null,
    spLower: d.setPointResponse?.lowerBound ?? null,
    spStrength: d.setPointResponse ? n(d.setPointResponse.strength) : null,
    spOvershoot: d.setPointResponse?.overshoot != null ? n(d.setPointResponse.overshoot) : null,
    spOvershootSe: d.setPointResponse?.overshootSe != null ? n(d.setPointResponse.overshootSe) : null,
    line: d.spectralLine ? { period: n(d.spectralLine.periodS), ratio: n(d.spectralLine.ratio), share: n(d.spectralLine.share), near: n(d.spectralLine.near) } : null,
    stiction: r.stiction.verdict,
    order: d.loadOrValve?.reading ?? null,
    sat: n(r.saturation),
    manual: n(r.manual),
    lm: d.loopMargin ? { ms: n(d.loopMargin.ms), lo: n(d.loopMargin.msLower), gm: n(d.loopMargin.gainMargin) } : null,
  };
}

export function printMissEvidence(id: string, evidence: readonly string[], figures: Record<string, unknown>): void {
  console.log(`    ${id} figures ${JSON.stringify(figures)}`);
  for (const e of evidence) console.log(`      - ${e}`);
}

export function dumpLine(file: string, row: Record<string, unknown>): void {
  appendFileSync(file, `${JSON.stringify(row)}\n`);
}
