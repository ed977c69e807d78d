/**
 * Condition evaluation: from one tracker update and the loop's effective policy to the four alarm
 * conditions (unstable, margin, sluggish, rim-forecast), with deadband and on/off delays.
 * Pure: no I/O; the caller passes `now` (epoch ms) and keeps the returned `ConditionMemory`.
 */
import type { AlarmCondition, AlarmPriority, LoopStateDto, PoleDto, TrackerState } from "@/lib/types";
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
    } else if (!withinBand) pendingSince = null;
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

export interface OscillatingMode {
  radius: number;
  /** |arg z| in radians (π for a negative real pole, which rings at the Nyquist frequency). */
  angle: number;
  decayRatio: number;
  zeta: number;
  /** Oscillation period in seconds, 2πT/|arg z|. */
  periodS: number;
}

const REAL_EPS = 1e-9;

function closedLoopPoles(s: LoopStateDto): PoleDto[] {
  if (s.modelPoles.length > 0) return s.modelPoles;
  return s.dataPoles;
}

/**
 * The dominant oscillating pair (largest radius among complex or negative real poles), with its
 * per-cycle decay ratio |z|^(2π/|arg z|) and damping ratio ζ = -ln r / √(ln² r + θ²)
 * (DOMAIN.md §1; Franklin, Powell & Workman, ch. 4). Null when no pole oscillates.
 */
export function dominantOscillatingMode(poles: readonly { re: number; im: number }[], T: number): OscillatingMode | null {
  let best: OscillatingMode | null = null;
  for (const p of poles) {
    const radius = Math.hypot(p.re, p.im);
    const oscillating = Math.abs(p.im) > REAL_EPS * Math.max(1, radius) || p.re < -REAL_EPS;
    if (!oscillating || radius === 0) continue;
    const angle = Math.abs(Math.atan2(p.im, p.re));
    if (best && radius <= best.radius) continue;
    const lr = Math.log(radius);
    best = {
      radius,
      angle,
      decayRatio: Math.pow(radius, (2 * Math.PI) / angle),
      zeta: -lr / Math.sqrt(lr * lr + angle * angle),
      periodS: (2 * Math.PI * T) / angle,
    };
  }
  return best;
}

/** Time constant τ = -T/ln z of the slowest positive real pole inside the circle (null if none). */
export function slowestRealTimeConstant(poles: readonly { re: number; im: number }[], T: number): number | null {
  let slowest: number | null = null;
  for (const p of poles) {
    if (Math.abs(p.im) > REAL_EPS || p.re <= 0 || p.re >= 1) continue;
    if (slowest == null || p.re > slowest) slowest = p.re;
  }
  return slowest == null ? null : -T / Math.log(slowest);
}

// ---------------------------------------------------------------- the four conditions

/** Tracker states in which no stability alarm is raised (the estimate is not trustworthy). */
export const NON_TRACKING: ReadonlySet<TrackerState> = new Set(["manual", "stale", "saturated", "learning", "low-excitation"]);

export interface ConditionMemory {
  filters: Record<string, LevelFilter>;
}

export const newConditionMemory = (): ConditionMemory => ({ filters: {} });

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
  /** The loop's baseline closed-loop time constant in seconds (for `sluggish`), null if unknown. */
  baselineTimeConstantS: number | null;
}

export const CONDITION_PRIORITY: Record<AlarmCondition, AlarmPriority> = {
  unstable: "urgent",
  margin: "low",
  sluggish: "low",
  "rim-forecast": "low",
};

const fmt = (v: number, digits = 3) => (Math.abs(v) >= 100 ? v.toFixed(0) : v.toPrecision(digits));

/**
 * Evaluate the four conditions of one loop for one tracker update. Returns the verdicts and the
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
  const step = (key: string, value: number | null, level: number, deadband: number, direction: "above" | "below") => {
    const f = stepLevel(mem.filters[key] ?? idleFilter(), value, { level, deadband, direction, onDelayMs, offDelayMs }, now);
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
    const msg = `No stability alarm while the ${reason}.`;
    return {
      memory: { filters: {} },
      verdicts: {
        unstable: verdict("unstable", { suppressedReason: reason, message: msg }),
        margin: verdict("margin", { suppressedReason: reason, message: msg }),
        sluggish: verdict("sluggish", { suppressedReason: reason, message: msg }),
        "rim-forecast": verdict("rim-forecast", { suppressedReason: reason, message: msg }),
      },
    };
  }

  const T = s.estimationPeriodS;
  const poles = closedLoopPoles(s);
  const maxRadius = poles.length > 0 ? Math.max(...poles.map((p) => Math.hypot(p.re, p.im))) : s.spectralRadius;

  // 2. unstable: a pole on/outside the unit circle, or the Jury test fails (Jury 1964).
  const outside = maxRadius != null && maxRadius >= 1;
  const unstableNow = s.juryStable === false || outside;
  const unstableValue = unstableNow ? Math.max(maxRadius ?? 1, 1) : maxRadius;
  const unstableOn = policy.enabled.unstable && step("unstable", unstableNow ? 1 : (maxRadius ?? 0) < 1 - policy.deadband.radius ? 0 : 0.5, 1, 0.5, "above");
  const unstable = verdict("unstable", {
    active: unstableOn,
    value: unstableValue,
    level: 1,
    message: unstableNow
      ? `Closed-loop pole at radius ${fmt(unstableValue ?? 1, 4)}${s.juryStable === false ? "; the Jury test fails" : ""}: the loop is unstable.`
      : `All closed-loop poles inside the unit circle (spectral radius ${maxRadius != null ? fmt(maxRadius, 4) : "unknown"}).`,
    suppressedReason: policy.enabled.unstable ? null : "disabled by policy",
  });

  const rootCause = unstableOn ? "unstable alarm active on this loop (one cause, one alarm)" : null;

  // 3. margin: the dominant oscillating mode drifts toward the circle.
  const mode = poles.length > 0 ? dominantOscillatingMode(poles, T) : null;
  const decay = mode ? mode.decayRatio : poles.length === 0 ? s.decayRatio : null;
  const zeta = mode ? mode.zeta : null;
  const pd = policy.deadband;
  let severity = 0;
  let trigger = "";
  if (step("margin.decay.low", decay, policy.decayRatio.low, pd.decayRatio, "above")) {
    severity = 1;
    trigger = `decay ratio ${fmt(decay ?? 0)} ≥ ${policy.decayRatio.low}`;
  }
  if (step("margin.decay.high", decay, policy.decayRatio.high, pd.decayRatio, "above")) {
    severity = 2;
    trigger = `decay ratio ${fmt(decay ?? 0)} ≥ ${policy.decayRatio.high}`;
  }
  if (policy.minDamping) {
    if (step("margin.zeta.low", zeta, policy.minDamping.low, pd.damping, "below") && severity < 1) {
      severity = 1;
      trigger = `damping ratio ${fmt(zeta ?? 0)} ≤ ${policy.minDamping.low}`;
    }
    if (step("margin.zeta.high", zeta, policy.minDamping.high, pd.damping, "below") && severity < 2) {
      severity = 2;
      trigger = `damping ratio ${fmt(zeta ?? 0)} ≤ ${policy.minDamping.high}`;
    }
  }
  if (policy.radius) {
    const r = mode ? mode.radius : null;
    if (step("margin.radius.low", r, policy.radius.low, pd.radius, "above") && severity < 1) {
      severity = 1;
      trigger = `oscillating pole radius ${fmt(r ?? 0, 4)} ≥ ${policy.radius.low} at T = ${T} s`;
    }
    if (step("margin.radius.high", r, policy.radius.high, pd.radius, "above") && severity < 2) {
      severity = 2;
      trigger = `oscillating pole radius ${fmt(r ?? 0, 4)} ≥ ${policy.radius.high} at T = ${T} s`;
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

  // 4. sluggish: the slowest real mode is much slower than the loop's baseline. A slow real pole
  //    near z = 1 is not an instability and never raises `margin` (only oscillating modes do).
  const tau = poles.length > 0 ? slowestRealTimeConstant(poles, T) : null;
  const base = facts.baselineTimeConstantS;
  const ratio = tau != null && base != null && base > 0 ? tau / base : null;
  const sluggishOn = policy.enabled.sluggish && step("sluggish", ratio, policy.sluggishMultiple, policy.sluggishMultiple * pd.sluggish, "above");
  const sluggish = verdict("sluggish", {
    active: sluggishOn && !rootCause,
    value: tau,
    level: base != null ? base * policy.sluggishMultiple : null,
    message:
      ratio != null && tau != null && base != null
        ? `Slowest real mode τ ${fmt(tau)} s is ${fmt(ratio, 2)}× the baseline ${fmt(base)} s (level ${policy.sluggishMultiple}×).`
        : base == null
          ? "No baseline time constant configured for this loop."
          : "No slow real mode.",
    suppressedReason: rootCause ?? (policy.enabled.sluggish ? null : "disabled by policy"),
  });

  // 5. rim-forecast: the tracker's trend reaches the alarm level within the horizon.
  const horizonMin = policy.forecastHorizonMinutes;
  const minutesTo = s.forecast ? Math.max(0, (s.forecast.at - now) / 60_000) : null;
  const forecastOn =
    policy.enabled["rim-forecast"] && step("forecast", marginOn ? null : minutesTo, horizonMin, horizonMin * 0.1, "below");
  const rimForecast = verdict("rim-forecast", {
    active: forecastOn && !rootCause && !marginOn,
    value: minutesTo,
    level: horizonMin,
    message:
      minutesTo != null
        ? `The trend reaches the alarm level in about ${fmt(minutesTo, 2)} min (horizon ${horizonMin} min).`
        : "No significant trend toward the alarm level.",
    suppressedReason: rootCause ?? (policy.enabled["rim-forecast"] ? null : "disabled by policy"),
  });

  return { memory: { filters }, verdicts: { unstable, margin, sluggish, "rim-forecast": rimForecast } };
}
