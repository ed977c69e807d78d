/**
 * Sample quality: which accepted samples may feed an estimator or a statistic.
 *
 * A value no transmitter in working order can give (a known fault code, a float overflow, a PV
 * or SP far outside the loop's configured range) is evidence of a sensor or gateway fault, not
 * noise: the sample is accepted and kept as *bad quality* (counted per device and reason, stored
 * as a count in history, remembered by the loop's tracker for a sensor-fault finding) and never
 * reaches an estimator or a min/mean/max. A gateway may say so itself with `"quality": "bad"` or
 * `"uncertain"` (telemetry contract, lib/domain/telemetry.ts).
 *
 * MV: the controller output is not a measurement. An MV far outside its configured range is not a
 * sensor fault but an output the actuator cannot follow (it stops at its end), so what the
 * process received is unknown: such a sample is *uncertain* (`mv-out-of-range`), kept out of the
 * estimators like any uncertain sample and counted apart from the bad ones. An MV at a fault code
 * or overflow is bad like any other field.
 */
import type { SampleDto, SampleQuality } from "./types";

/**
 * Margin beyond the configured range, as a fraction of the span on each side, before a PV or SP
 * counts as out of range (common practice: transmitters read a few % beyond their calibrated
 * range before they saturate, e.g. 4-20 mA signals go to about 3.8-20.5 mA; 10 % leaves room).
 */
export const RANGE_MARGIN_FRACTION = 0.1;

/**
 * Values gateways, historians and data loggers write for "no reading" (common practice, no single
 * source): -9999 and its longer forms. A value that lies inside the loop's configured range is data,
 * not a code (a loop ranged -10000..0 may read -9999).
 */
export const FAULT_CODES: readonly number[] = [-9999, -99999, -999999];

/**
 * No engineering value reaches this magnitude; it covers float32 overflow (±3.4028235e38, the
 * largest IEEE 754 single, which a PLC writes on a failed conversion) and its neighbours.
 */
export const FAULT_MAGNITUDE = 1e30;

export const QUALITY_REASONS = ["fault-value", "out-of-range", "reported-bad", "mv-out-of-range", "reported-uncertain"] as const;
export type QualityReason = (typeof QUALITY_REASONS)[number];

/** The quality each reason implies. */
export const REASON_QUALITY: Record<QualityReason, Exclude<SampleQuality, "good">> = {
  "fault-value": "bad",
  "out-of-range": "bad",
  "reported-bad": "bad",
  "mv-out-of-range": "uncertain",
  "reported-uncertain": "uncertain",
};

/** The ranges a judgement needs (engineering units, as configured for the loop). */
export interface QualityRange {
  pvLo: number;
  pvHi: number;
  mvLo: number;
  mvHi: number;
}

export type QualityVerdict = { quality: "good"; reason: null } | { quality: "bad" | "uncertain"; reason: QualityReason };

const GOOD: QualityVerdict = { quality: "good", reason: null };

function isFaultValue(v: number, lo: number, hi: number): boolean {
  if (Math.abs(v) >= FAULT_MAGNITUDE) return true;
  if (v >= lo && v <= hi) return false;
  return FAULT_CODES.includes(v);
}

function outside(v: number, lo: number, hi: number): boolean {
  const m = RANGE_MARGIN_FRACTION * (hi - lo);
  return v < lo - m || v > hi + m;
}

/** A single value that is neither a fault value nor out of its range (with the margin). */
export function valueUsable(v: number, lo: number, hi: number): boolean {
  return Number.isFinite(v) && !isFaultValue(v, lo, hi) && !outside(v, lo, hi);
}

/**
 * Judge one validated sample against its loop's ranges. Without a range (a loop whose
 * configuration is not loaded) only fault values and the gateway's own word count. Order:
 * fault value, out of range, the gateway's `bad`, an MV out of range, the gateway's `uncertain`.
 */
export function judgeSampleQuality(s: Pick<SampleDto, "sp" | "pv" | "mv" | "quality">, range: QualityRange | null): QualityVerdict {
  const pvLo = range?.pvLo ?? Infinity;
  const pvHi = range?.pvHi ?? -Infinity;
  const mvLo = range?.mvLo ?? Infinity;
  const mvHi = range?.mvHi ?? -Infinity;
  if (isFaultValue(s.pv, pvLo, pvHi) || isFaultValue(s.sp, pvLo, pvHi) || isFaultValue(s.mv, mvLo, mvHi)) return { quality: "bad", reason: "fault-value" };
  if (range && (outside(s.pv, range.pvLo, range.pvHi) || outside(s.sp, range.pvLo, range.pvHi))) return { quality: "bad", reason: "out-of-range" };
  if (s.quality === "bad") return { quality: "bad", reason: "reported-bad" };
  if (range && outside(s.mv, range.mvLo, range.mvHi)) return { quality: "uncertain", reason: "mv-out-of-range" };
  if (s.quality === "uncertain") return { quality: "uncertain", reason: "reported-uncertain" };
  return GOOD;
}
