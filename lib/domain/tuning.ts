/**
 * The one converter from a loop's stored tuning (as the site writes it) to the seconds and %/%
 * gain lib/control and the simulators use. The tracker, the models and the demo seed all use it.
 */


export type ControllerAction = "direct" | "reverse";
export type ControllerForm = "ideal" | "parallel" | "series";

/** A loop's tuning in seconds and gain (%/% of span), as lib/control and the simulators use it. */
export interface TuningSeconds {
  /** Controller gain (%/% of span, > 0; `action` gives the sign). */
  kp: number;
  /** Integral time in seconds; null = no integral action. */
  ti: number | null;
  /** Derivative time in seconds (0 = none). */
  td: number;
  /** Derivative filter time constant in seconds (0 when there is no derivative action). */
  tf: number;
  action: ControllerAction;
  form: ControllerForm;
}

/** The tuning columns of a loop as the site writes them. */
export interface TuningFields {
  gainKind: "gain" | "pb";
  gainValue: number;
  tiValue: number | null;
  tiUnits: "s" | "min" | "repeats-per-min";
  tdValue: number | null;
  tdUnits: "s" | "min";
  tfS: number | null;
  derivativeAlpha: number | null;
  action: ControllerAction;
  form: ControllerForm;
}

/** Seconds of an integral setting: Ti in s or min, or an integral rate in repeats/min (Ti = 60 / rate). */
export function integralTimeSeconds(value: number, units: TuningFields["tiUnits"]): number {
  return units === "s" ? value : units === "min" ? value * 60 : 60 / value;
}

/** Seconds of a derivative setting: Td in s or min. */
export function derivativeTimeSeconds(value: number, units: TuningFields["tdUnits"]): number {
  return units === "min" ? value * 60 : value;
}

/**
 * Convert the stored tuning (as the site writes it) to seconds: proportional band PB % ->
 * Kc = 100 / PB; Ti in minutes x 60; integral rate in repeats/min -> Ti = 60 / rate s; Td in
 * minutes x 60; derivative filter Tf = alpha * Td when given as alpha (common practice).
 */
export function tuningSeconds(l: Partial<TuningFields> & Pick<TuningFields, "gainValue">): TuningSeconds {
  const kp = (l.gainKind ?? "gain") === "pb" ? 100 / l.gainValue : l.gainValue;
  if (!(kp > 0) || !Number.isFinite(kp)) throw new RangeError(`Controller gain must be > 0 (got ${l.gainValue}).`);
  let ti: number | null = null;
  if (l.tiValue != null && l.tiValue > 0 && Number.isFinite(l.tiValue)) {
    ti = integralTimeSeconds(l.tiValue, l.tiUnits ?? "s");
  }
  const td = l.tdValue != null && l.tdValue > 0 && Number.isFinite(l.tdValue) ? derivativeTimeSeconds(l.tdValue, l.tdUnits ?? "s") : 0;
  const tf = td > 0 ? (l.tfS != null && l.tfS > 0 ? l.tfS : l.derivativeAlpha != null && l.derivativeAlpha > 0 ? l.derivativeAlpha * td : td / 10) : 0;
  return { kp, ti, td, tf, action: l.action ?? "reverse", form: l.form ?? "ideal" };
}
