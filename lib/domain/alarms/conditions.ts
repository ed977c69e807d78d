/**
 * Condition evaluation: from one tracker update and the loop's effective policy to the three
 * operator alarm conditions (unstable, margin, rim-forecast), with deadband and on/off delays.
 * A slow set-point response is not among them: it calls for retuning, not for an operator's
 * response, and is the loop assessment's sluggish-tuning finding on the engineering work list
 * (lib/assessment/model-check.ts).
 * Pure: no I/O; the caller passes `now` (epoch ms) and keeps the returned `ConditionMemory`.
 */
import { effectivePoles, modeWithinConfidence } from "@/lib/domain/assessment";
import type { AlarmCondition, AlarmPriority, LoopStateDto, TrackerState } from "@/lib/domain/types";
import type { EffectivePolicy } from "./policy";

// ---------------------------------------------------------------- hysteresis with delays

/** Memory of one level: is it on, and since when is it pending (on-delay) or clearing (off-delay)? */
export interface LevelFilter {
  on: boolean;
  pendingSince: number | null;
  clearingSince: number | null;
}

export const idleFilter = (): LevelFilter => ({ on: false, pendingSince: null, clearingSince: null });

export interface LevelSpec {
  level: number;
  deadband: number;
  /** "above": alarm when value >= level; "below": alarm when value <= level. */
  direction: "above" | "below";
  onDelayMs: number;
  offDelayMs: number;
  /** The on-delay needs the level reached at every step (not only within the deadband). */
  strict?: boolean;
}

/**
 * One step of a deadband + on/off-delay alarm filter (the chatter remedies ISA-18.2 names).
 * The on-delay starts when the value reaches the level and keeps running while the value stays
 * within the deadband of the level (so a value jittering across the level by less than the
 * deadband activates once, after the delay); it restarts when the value leaves the deadband.
 * Once on, the alarm clears only after the value has stayed beyond the deadband for the
 * off-delay. A null value means "the measure does not exist now" (e.g. no oscillating mode):
 * it counts as beyond the deadband.
 */
export function stepLevel(f: LevelFilter, value: number | null, spec: LevelSpec, now: number): LevelFilter {
  const reached = value != null && (spec.direction === "above" ? value >= spec.level : value <= spec.level);
  const withinBand =
    value != null && (spec.direction === "above" ? value >= spec.level - spec.deadband : value <= spec.level + spec.deadband);
  if (!f.on) {
    let pendingSince = f.pendingSince;
    if (pendingSince == null) {
      if (reached) pendingSince = now;
    } else if (!(spec.strict ? reached : withinBand)) pendingSince = null;
    if (pendingSince != null && now - pendingSince >= spec.onDelayMs) return { on: true, pendingSince: null, clearingSince: null };
    return { on: false, pendingSince, clearingSince: null };
  }
  let clearingSince = f.clearingSince;
  if (withinBand) clearingSince = null;
  else if (clearingSince == null) clearingSince = now;
  if (clearingSince != null && now - clearingSince >= spec.offDelayMs) return { on: false, pendingSince: null, clearingSince: null };
  return { on: true, pendingSince: null, clearingSince };
}

// ---------------------------------------------------------------- measures from the poles

const REAL_EPS = 1e-9;

/** Time constant τ = -T/ln z of the slowest positive real pole inside the circle (null if none). */
export function slowestRealTimeConstant(poles: readonly { re: number; im: number }[], T: number): number | null {
  let slowest: number | null = null;
  for (const p of poles) {
    if (Math.abs(p.im) > REAL_EPS || p.re <= 0 || p.re >= 1) continue;
    if (slowest == null || p.re > slowest) slowest = p.re;
  }
  return slowest == null ? null : -T / Math.log(slowest);
}

// ---------------------------------------------------------------- the three conditions

/** Tracker states in which no stability alarm is raised (the estimate is not trustworthy). */
export const NON_TRACKING: ReadonlySet<TrackerState> = new Set(["manual", "stale", "saturated", "learning", "low-excitation", "poor-fit"]);

export interface ConditionMemory {
  filters: Record<string, LevelFilter>;
}

export const newConditionMemory = (): ConditionMemory => ({ filters: {} });

/**
 * True when an update carries an estimate the alarms may act on: a trusted tracker state and a
 * closed-loop estimate (poles or at least a spectral radius). A tracker just restored from a
 * checkpoint may say `tracking` before it has any poles: that is no evidence either way.
 */
export function isTrustedEstimate(s: LoopStateDto): boolean {
  if (NON_TRACKING.has(s.trackerState)) return false;
  return s.modelPoles.length > 0 || s.dataPoles.length > 0 || s.spectralRadius != null;
}

/**
 * The filter memory of a loop whose alarms were restored (from MariaDB and the journal) rather
 * than evaluated in this process: every level behind an active alarm starts "on", so the alarm
 * returns to normal only after evidence beyond the deadband for the whole off-delay (ISA-18.2:
 * return to normal on evidence), and an alarm still in effect is not re-announced.
 */
export function memoryForActive(active: readonly { condition: AlarmCondition; priority: AlarmPriority }[]): ConditionMemory {
  const on = (): LevelFilter => ({ on: true, pendingSince: null, clearingSince: null });
  const filters: Record<string, LevelFilter> = {};
  for (const a of active) {
    if (a.condition === "unstable") filters.unstable = on();
    else if (a.condition === "rim-forecast") filters.forecast = on();
    else {
      const levels = a.priority === "high" || a.priority === "urgent" ? ["low", "high"] : ["low"];
      for (const lv of levels) for (const m of ["decay", "zeta", "radius"]) filters[`margin.${m}.${lv}`] = on();
    }
  }
  return { filters };
}

export interface ConditionVerdict {
  active: boolean;
  priority: AlarmPriority;
  value: number | null;
  level: number | null;
  message: string;
  /** Non-null when the condition is suppressed by design (with the reason in words). */
  suppressedReason: string | null;
}

export interface LoopFacts {
  /**
   * Minutes until the decay-ratio trend reaches the margin level (the assessment's
   * `forecast.alarmLevel`, `forecastMinutesOf`), null when no significant trend toward it;
   * absent = not evaluated.
   */
  forecastMinutes?: number | null;
}

/** Minutes from `now` (epoch ms) to the assessment's forecast of the alarm level, or null. */
export function forecastMinutesOf(s: Pick<LoopStateDto, "forecast" | "trackerState">, now: number): number | null {
  if (NON_TRACKING.has(s.trackerState)) return null;
  const f = s.forecast?.alarmLevel;
  return f ? Math.max(0, (f.at - now) / 60_000) : null;
}

export const CONDITION_PRIORITY: Record<AlarmCondition, AlarmPriority> = {
  unstable: "urgent",
  margin: "low",
  "rim-forecast": "low",
};

const fmt = (v: number, digits = 3) => (Math.abs(v) >= 100 ? v.toFixed(0) : v.toPrecision(digits));

/**
 * Evaluate the three conditions of one loop for one tracker update. Returns the verdicts and the
 * new memory (the input memory is not modified).
 */
export function evaluateConditions(
  mem: ConditionMemory,
  s: LoopStateDto,
  policy: EffectivePolicy,
  facts: LoopFacts,
  now: number,
): { memory: ConditionMemory; verdicts: Record<AlarmCondition, ConditionVerdict> } {
  const filters: Record<string, LevelFilter> = {};
  const onDelayMs = policy.onDelayS * 1000;
  const offDelayMs = policy.offDelayS * 1000;
  const advisoryOnDelayMs = policy.advisoryOnDelayS * 1000;
  const step = (key: string, value: number | null, level: number, deadband: number, direction: "above" | "below", advisory = false) => {
    const f = stepLevel(mem.filters[key] ?? idleFilter(), value, { level, deadband, direction, onDelayMs: advisory ? advisoryOnDelayMs : onDelayMs, offDelayMs }, now);
    filters[key] = f;
    return f.on;
  };
  const verdict = (c: AlarmCondition, v: Partial<ConditionVerdict>): ConditionVerdict => ({
    active: false,
    priority: CONDITION_PRIORITY[c],
    value: null,
    level: null,
    message: "",
    suppressedReason: null,
    ...v,
  });

  // 1. Tracker not trustworthy: every condition suppressed, filters reset.
  if (NON_TRACKING.has(s.trackerState)) {
    const reason = `tracker ${s.trackerState.replace(/-/g, " ")}${s.stateReason ? `: ${s.stateReason}` : ""}`;
    const msg = `No stability alarm while the tracker state is ${s.trackerState.replace(/-/g, " ")}${s.stateReason ? ` (${s.stateReason})` : ""}.`;
    return {
      memory: { filters: {} },
      verdicts: {
        unstable: verdict("unstable", { suppressedReason: reason, message: msg }),
        margin: verdict("margin", { suppressedReason: reason, message: msg }),
        "rim-forecast": verdict("rim-forecast", { suppressedReason: reason, message: msg }),
      },
    };
  }

  const T = s.estimationPeriodS;
  const poles = effectivePoles(s);
  const maxRadius = poles.length > 0 ? Math.max(...poles.map((p) => Math.hypot(p.re, p.im))) : s.spectralRadius;

  // 2. unstable: a pole on/outside the unit circle, or the Jury test fails (Jury 1964). The Jury
  //    verdict and the roots come from the same estimated polynomial, so they agree; a pole
  //    counts as outside when it is outside by more than `confidenceSigmas` standard deviations
  //    of its radius (a slow real pole near z = 1 sits within estimation noise of the circle).
  //    The on-delay is strict here: the verdict must hold at every update for the whole delay.
  //    A pole whose conditioning bound (how far a rounding error in the coefficients can move it,
  //    lib/control/root-bounds.ts) straddles the circle is "undecided near the rim": no unstable
  //    verdict then, only the not-proven signal.
  const k = policy.confidenceSigmas;
  const rimUndecided = s.rimUndecided === true;
  const outsideRadius = poles.length > 0 ? Math.max(...poles.map((p) => Math.hypot(p.re, p.im) - k * (p.sdRadius ?? 0) - (p.bound ?? 0))) : s.spectralRadius;
  const unstableNow = rimUndecided ? false : poles.length > 0 ? (outsideRadius ?? 0) >= 1 : s.juryStable === false || (s.spectralRadius ?? 0) >= 1;
  const clearlyInside = poles.length > 0 ? (maxRadius ?? 0) < 1 - policy.deadband.radius : s.juryStable !== false && (s.spectralRadius ?? 0) < 1;
  // Filter input: 1 = unstable now, 0.5 = not proven either way (within the deadband), 0 = stable.
  const unstableSignal = unstableNow ? 1 : clearlyInside ? 0 : 0.5;
  const unstableOn =
    policy.enabled.unstable &&
    (() => {
      const f = stepLevel(mem.filters.unstable ?? idleFilter(), unstableSignal, { level: 1, deadband: 0.5, direction: "above", onDelayMs, offDelayMs, strict: true }, now);
      filters.unstable = f;
      return f.on;
    })();
  const unstable = verdict("unstable", {
    active: unstableOn,
    value: maxRadius,
    level: 1,
    message: rimUndecided
      ? `Pole at radius ${fmt(maxRadius ?? 1, 4)}: undecided near the rim (a rounding error in the model's coefficients can move it across the unit circle); not an unstable verdict.`
      : unstableNow
      ? `Closed-loop pole at radius ${fmt(maxRadius ?? 1, 4)}${s.juryStable === false ? "; the Jury test fails" : ""}: the loop is unstable.`
      : s.juryStable === false || (maxRadius ?? 0) >= 1
        ? `Estimated pole at radius ${fmt(maxRadius ?? 1, 4)}, within ${k} standard deviation(s) of the unit circle: not yet proven unstable.`
        : `All closed-loop poles inside the unit circle (spectral radius ${maxRadius != null ? fmt(maxRadius, 4) : "unknown"}).`,
    suppressedReason: policy.enabled.unstable ? null : "disabled by policy",
  });

  const rootCause = unstableOn ? "unstable alarm active on this loop (one cause, one alarm)" : null;

  // 3. margin: the dominant oscillating mode drifts toward the circle.
  //    The assessment's slowest-decaying oscillating mode, its radius moved `confidenceSigmas`
  //    standard deviations inward so a poorly determined pole does not count as near the rim.
  const mode = s.oscillation ? modeWithinConfidence(s.oscillation, k) : null;
  const decay = mode ? mode.decayRatio : s.oscillation === undefined ? s.decayRatio : null;
  const zeta = mode ? mode.zeta : null;
  const pd = policy.deadband;
  let severity = 0;
  let trigger = "";
  if (step("margin.decay.low", decay, policy.decayRatio.low, pd.decayRatio, "above")) {
    severity = 1;
    trigger = `decay ratio ${fmt(decay ?? 0)} against the low-priority level ${policy.decayRatio.low}`;
  }
  if (step("margin.decay.high", decay, policy.decayRatio.high, pd.decayRatio, "above")) {
    severity = 2;
    trigger = `decay ratio ${fmt(decay ?? 0)} against the high-priority level ${policy.decayRatio.high}`;
  }
  if (policy.minDamping) {
    if (step("margin.zeta.low", zeta, policy.minDamping.low, pd.damping, "below") && severity < 1) {
      severity = 1;
      trigger = `damping ratio ${fmt(zeta ?? 0)} against the low-priority minimum ${policy.minDamping.low}`;
    }
    if (step("margin.zeta.high", zeta, policy.minDamping.high, pd.damping, "below") && severity < 2) {
      severity = 2;
      trigger = `damping ratio ${fmt(zeta ?? 0)} against the high-priority minimum ${policy.minDamping.high}`;
    }
  }
  if (policy.radius) {
    const r = mode ? mode.radius : null;
    if (step("margin.radius.low", r, policy.radius.low, pd.radius, "above") && severity < 1) {
      severity = 1;
      trigger = `oscillating pole radius ${fmt(r ?? 0, 4)} against the low-priority radius ${policy.radius.low} at T = ${T} s`;
    }
    if (step("margin.radius.high", r, policy.radius.high, pd.radius, "above") && severity < 2) {
      severity = 2;
      trigger = `oscillating pole radius ${fmt(r ?? 0, 4)} against the high-priority radius ${policy.radius.high} at T = ${T} s`;
    }
  }
  const marginOn = policy.enabled.margin && severity > 0;
  const margin = verdict("margin", {
    active: marginOn && !rootCause,
    priority: severity >= 2 ? "high" : "low",
    value: decay,
    level: severity >= 2 ? policy.decayRatio.high : policy.decayRatio.low,
    message: marginOn
      ? `Dominant oscillating mode near the rim: ${trigger}${mode ? ` (ζ ${fmt(mode.zeta)}, period ${fmt(mode.periodS)} s)` : ""}.`
      : decay != null
        ? `Dominant oscillating mode decay ratio ${fmt(decay)} (level ${policy.decayRatio.low}).`
        : "No oscillating closed-loop mode.",
    suppressedReason: rootCause ?? (policy.enabled.margin ? null : "disabled by policy"),
  });

  // 4. rim-forecast: the margin measure's trend reaches the margin level within the horizon.
  const horizonMin = policy.forecastHorizonMinutes;
  const minutesTo = facts.forecastMinutes ?? null;
  const forecastOn =
    policy.enabled["rim-forecast"] && step("forecast", marginOn ? null : minutesTo, horizonMin, horizonMin * 0.1, "below", true);
  const rimForecast = verdict("rim-forecast", {
    active: forecastOn && !rootCause && !marginOn,
    value: minutesTo,
    level: horizonMin,
    message:
      minutesTo != null
        ? `The decay-ratio trend reaches the margin level ${policy.decayRatio.low} in about ${fmt(minutesTo, 2)} min (horizon ${horizonMin} min).`
        : "No significant trend toward the margin level.",
    suppressedReason: rootCause ?? (policy.enabled["rim-forecast"] ? null : "disabled by policy"),
  });

  return { memory: { filters }, verdicts: { unstable, margin, "rim-forecast": rimForecast } };
}
