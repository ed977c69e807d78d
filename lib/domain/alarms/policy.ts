/**
 * Alarm policies: what the levels are, how the scopes combine, and what a period-invariant
 * level means at one loop's estimation period.
 *
 * Tenant and site levels are period-invariant (decay ratio of the dominant oscillating pair and
 * minimum damping ratio), so changing a loop's estimation period does not move them. Only a loop
 * policy may add explicit radius levels, which hold at that loop's configured estimation period.
 * Precedence: loop > site > tenant > built-in defaults, field by field.
 */
import { z } from "zod";
import { BadRequestError, ValidationError } from "@/lib/domain/errors";

export const POLICY_SCOPES = ["tenant", "site", "loop"] as const;
export type PolicyScope = (typeof POLICY_SCOPES)[number];

const fraction = z.number().gt(0).lt(1);

/** A two-level margin threshold: `low` raises a low-priority alarm, `high` escalates it to high. */
const decayLevels = z
  .object({ low: fraction, high: z.number().gt(0).max(1) })
  .strict()
  .refine((v) => v.low < v.high, { message: "the high decay-ratio level must be above the low level" });
const dampingLevels = z
  .object({ low: fraction, high: fraction })
  .strict()
  .refine((v) => v.high < v.low, { message: "the high damping level must be below the low level (less damping is worse)" });
const radiusLevels = z
  .object({ low: fraction, high: z.number().gt(0).max(1) })
  .strict()
  .refine((v) => v.low < v.high, { message: "the high radius level must be above the low level" });

/** The settings one scope may set; every field optional (absent = inherit). */
export const policyOverrideSchema = z
  .object({
    /** Per-cycle decay ratio |z|^(2π/|arg z|) of the dominant oscillating pair (1 on the circle). */
    decayRatio: decayLevels,
    /** Minimum damping ratio ζ of the dominant oscillating pair; null = not used. */
    minDamping: dampingLevels.nullable(),
    /** Explicit spectral-radius levels of the oscillating mode, loop scope only, at the loop's estimation period. */
    radius: radiusLevels.nullable(),
    deadband: z
      .object({
        decayRatio: z.number().min(0).max(0.5),
        damping: z.number().min(0).max(0.5),
        radius: z.number().min(0).max(0.1),
      })
      .strict()
      .partial(),
    /** The condition must hold (within the deadband) this long before the alarm activates. */
    onDelayS: z.number().min(0).max(3600),
    /** The condition must stay clear (beyond the deadband) this long before the alarm clears. */
    offDelayS: z.number().min(0).max(3600),
    /**
     * On-delay of the low-priority advisory `rim-forecast`: it describes a slow, persistent
     * trend, so it must hold longer before it is announced.
     */
    advisoryOnDelayS: z.number().min(0).max(24 * 3600),
    /** The longest an operator may shelve an alarm. */
    shelveMaxMinutes: z.number().int().min(1).max(7 * 24 * 60),
    /** `rim-forecast` when the trend reaches the margin level within this horizon. */
    forecastHorizonMinutes: z.number().min(1).max(7 * 24 * 60),
    /**
     * Levels apply to the estimate moved this many standard deviations (of each pole's radius,
     * delta method) toward safety, so estimation noise alone does not raise an alarm; 0 = point
     * estimates.
     */
    confidenceSigmas: z.number().min(0).max(3),
    enabled: z
      .object({ unstable: z.boolean(), margin: z.boolean(), "rim-forecast": z.boolean() })
      .strict()
      .partial(),
  })
  .strict()
  .partial();

export type PolicyOverride = z.infer<typeof policyOverrideSchema>;

export interface EffectivePolicy {
  decayRatio: { low: number; high: number };
  minDamping: { low: number; high: number } | null;
  radius: { low: number; high: number } | null;
  deadband: { decayRatio: number; damping: number; radius: number };
  onDelayS: number;
  offDelayS: number;
  advisoryOnDelayS: number;
  shelveMaxMinutes: number;
  forecastHorizonMinutes: number;
  confidenceSigmas: number;
  enabled: { unstable: boolean; margin: boolean; "rim-forecast": boolean };
}

/**
 * Built-in defaults. Decay ratio 0.25 (quarter-amplitude) is the classic aggressive tuning target
 * (common practice), so the low level sits above it at 0.35 (ζ ≈ 0.165) and the high at 0.5
 * (ζ ≈ 0.110). Delays and deadbands are common practice for chatter suppression (ISA-18.2 names
 * the mechanisms; the values are ours).
 */
export const DEFAULT_POLICY: EffectivePolicy = {
  decayRatio: { low: 0.35, high: 0.5 },
  minDamping: null,
  radius: null,
  deadband: { decayRatio: 0.02, damping: 0.01, radius: 0.002 },
  onDelayS: 30,
  offDelayS: 30,
  advisoryOnDelayS: 600,
  shelveMaxMinutes: 8 * 60,
  forecastHorizonMinutes: 60,
  confidenceSigmas: 1,
  enabled: { unstable: true, margin: true, "rim-forecast": true },
};

/**
 * Policy fields of the retired `sluggish` alarm condition. A slow set-point response is the loop
 * assessment's sluggish-tuning finding on the engineering work list now (lib/assessment/model-check.ts,
 * level: the tenant's work-list multiple of the loop's baseline time constant), never an operator alarm.
 */
export const RETIRED_POLICY_FIELDS = ["sluggishMultiple", "deadband.sluggish", "enabled.sluggish"] as const;

/** The retired fields present in raw settings (paths as in RETIRED_POLICY_FIELDS). */
export function retiredPolicyFields(raw: unknown): string[] {
  if (!raw || typeof raw !== "object" || Array.isArray(raw)) return [];
  const o = raw as Record<string, unknown>;
  const has = (obj: unknown, k: string) => !!obj && typeof obj === "object" && !Array.isArray(obj) && Object.hasOwn(obj, k);
  return RETIRED_POLICY_FIELDS.filter((path) => {
    const [a, b] = path.split(".") as [string, string | undefined];
    return b === undefined ? has(o, a) : has(o[a], b);
  });
}

/**
 * Validate the settings of one scope: 400 naming the field when it still sends a retired
 * `sluggish` field (it moved to the engineering work list), 422 with the field names on other bad input.
 */
export function parsePolicyOverride(scope: PolicyScope, raw: unknown): PolicyOverride {
  const retired = retiredPolicyFields(raw);
  if (retired.length > 0)
    throw new BadRequestError(
      `Invalid alarm policy: ${retired.join(", ")}: the sluggish alarm condition is no longer an operator alarm; ` +
        "a slow set-point response is the sluggish-tuning finding on the engineering work list (its level, a multiple of the loop's baseline time constant, is a work-list setting). Remove the field.",
      retired.map((path) => ({ path: path.split("."), message: "moved to the engineering work list (sluggish-tuning finding)" })),
    );
  const parsed = policyOverrideSchema.safeParse(raw);
  if (!parsed.success) {
    const msg = parsed.error.issues.map((i) => `${i.path.join(".") || "settings"}: ${i.message}`).join("; ");
    throw new ValidationError(`Invalid alarm policy: ${msg}`, parsed.error.issues);
  }
  if (scope !== "loop" && parsed.data.radius != null)
    throw new ValidationError(
      "Radius levels depend on the sample period and may be set only for one loop; tenant and site levels are decay ratio and damping.",
    );
  return parsed.data;
}

/** Combine defaults < tenant < site < loop, field by field (nested objects merged per key). */
export function resolvePolicy(layers: { tenant?: PolicyOverride | null; site?: PolicyOverride | null; loop?: PolicyOverride | null }): EffectivePolicy {
  const eff: EffectivePolicy = structuredClone(DEFAULT_POLICY);
  for (const layer of [layers.tenant, layers.site, layers.loop]) {
    if (!layer) continue;
    if (layer.decayRatio) eff.decayRatio = { ...layer.decayRatio };
    if (layer.minDamping !== undefined) eff.minDamping = layer.minDamping ? { ...layer.minDamping } : null;
    if (layer.radius !== undefined) eff.radius = layer.radius ? { ...layer.radius } : null;
    if (layer.deadband) eff.deadband = { ...eff.deadband, ...stripUndefined(layer.deadband) };
    if (layer.enabled) eff.enabled = { ...eff.enabled, ...stripUndefined(layer.enabled) };
    for (const k of ["onDelayS", "offDelayS", "advisoryOnDelayS", "shelveMaxMinutes", "forecastHorizonMinutes", "confidenceSigmas"] as const) {
      const v = layer[k];
      if (v !== undefined) eff[k] = v;
    }
  }
  // Radius levels come from the loop layer only (a stored site/tenant value is ignored).
  eff.radius = layers.loop?.radius ?? null;
  return eff;
}

function stripUndefined<T extends object>(o: T): Partial<T> {
  return Object.fromEntries(Object.entries(o).filter(([, v]) => v !== undefined)) as Partial<T>;
}

// ---- period equivalents (docs/domain.md §1; Franklin, Powell & Workman, Digital Control of Dynamic Systems, ch. 4) ----

/** Damping ratio of a mode with per-cycle decay ratio d: d = exp(-2πζ/√(1-ζ²)) ⇒ ζ = -ln d / √(4π² + ln² d). */
export function dampingFromDecayRatio(d: number): number {
  if (!(d > 0)) throw new RangeError("decay ratio must be > 0");
  if (d >= 1) return 0;
  const l = Math.log(d);
  return -l / Math.sqrt(4 * Math.PI * Math.PI + l * l);
}

/** Per-cycle decay ratio of a mode with damping ratio 0 ≤ ζ < 1: exp(-2πζ/√(1-ζ²)). */
export function decayRatioFromDamping(zeta: number): number {
  if (!(zeta >= 0 && zeta < 1)) throw new RangeError("damping ratio must satisfy 0 <= zeta < 1");
  return Math.exp((-2 * Math.PI * zeta) / Math.sqrt(1 - zeta * zeta));
}

/**
 * What a decay-ratio level means for a mode of oscillation period `oscPeriodS` seen at sample
 * period `T`: the envelope time constant τ = -P / ln d and the pole radius r = e^{-T/τ} = d^(T/P).
 */
export function decayRatioEquivalents(d: number, T: number, oscPeriodS: number | null) {
  const zeta = dampingFromDecayRatio(d);
  if (oscPeriodS == null || !(oscPeriodS > 0) || d >= 1) return { zeta, radius: d >= 1 ? 1 : null, timeConstantS: null };
  const timeConstantS = -oscPeriodS / Math.log(d);
  return { zeta, radius: Math.exp(-T / timeConstantS), timeConstantS };
}

/** The decay ratio that a pole radius `r` at period `T` implies for a mode of oscillation period P. */
export function radiusToDecayRatio(r: number, T: number, oscPeriodS: number): number {
  return Math.pow(r, oscPeriodS / T);
}

export interface LevelEquivalent {
  priority: "low" | "high";
  source: "decay-ratio" | "damping" | "radius";
  level: number;
  decayRatio: number | null;
  zeta: number | null;
  radius: number | null;
  timeConstantS: number | null;
}

/**
 * Every effective margin level of a loop with its equivalents at the loop's estimation period
 * `T`. Radius and time constant need the frequency of the mode: the current dominant oscillating
 * mode's period `oscPeriodS` (null when the loop has no oscillating mode now).
 */
export function policyEquivalents(policy: EffectivePolicy, T: number, oscPeriodS: number | null): LevelEquivalent[] {
  const out: LevelEquivalent[] = [];
  for (const pr of ["low", "high"] as const) {
    const d = policy.decayRatio[pr];
    out.push({ priority: pr, source: "decay-ratio", level: d, decayRatio: d, ...decayRatioEquivalents(d, T, oscPeriodS) });
    if (policy.minDamping) {
      const z = policy.minDamping[pr];
      const dz = decayRatioFromDamping(z);
      const eq = decayRatioEquivalents(dz, T, oscPeriodS);
      out.push({ priority: pr, source: "damping", level: z, decayRatio: dz, zeta: z, radius: eq.radius, timeConstantS: eq.timeConstantS });
    }
    if (policy.radius) {
      const r = policy.radius[pr];
      const timeConstantS = r < 1 ? -T / Math.log(r) : null;
      const dr = oscPeriodS ? radiusToDecayRatio(r, T, oscPeriodS) : null;
      out.push({ priority: pr, source: "radius", level: r, decayRatio: dr, zeta: dr != null ? dampingFromDecayRatio(dr) : null, radius: r, timeConstantS });
    }
  }
  return out;
}

/**
 * Read stored settings written in the flat form (`decayRatioWarn`, `decayRatioAlarm`,
 * `minDamping` as one number, `radiusWarn`/`radiusAlarm`, `deadband` as one number on the decay
 * ratio, `forecastHorizonH`) as well as the nested form this module writes. A single damping
 * level is taken as the low level, with the high level at half of it (our convention).
 */
export function normalizeStoredSettings(raw: unknown): Record<string, unknown> {
  if (typeof raw === "string") raw = JSON.parse(raw) as unknown;
  if (!raw || typeof raw !== "object" || Array.isArray(raw)) return {};
  const src = { ...(raw as Record<string, unknown>) };
  const out: Record<string, unknown> = {};
  const num = (v: unknown) => (typeof v === "number" && Number.isFinite(v) ? v : undefined);
  const warn = num(src.decayRatioWarn);
  const alarm = num(src.decayRatioAlarm);
  if (warn !== undefined || alarm !== undefined)
    out.decayRatio = { low: warn ?? DEFAULT_POLICY.decayRatio.low, high: alarm ?? DEFAULT_POLICY.decayRatio.high };
  if (typeof src.minDamping === "number") out.minDamping = { low: src.minDamping, high: src.minDamping / 2 };
  const rw = num(src.radiusWarn);
  const ra = num(src.radiusAlarm);
  if (rw !== undefined && ra !== undefined) out.radius = { low: rw, high: ra };
  if (typeof src.deadband === "number") out.deadband = { decayRatio: src.deadband };
  const fh = num(src.forecastHorizonH);
  if (fh !== undefined) out.forecastHorizonMinutes = fh * 60;
  for (const k of ["decayRatioWarn", "decayRatioAlarm", "radiusWarn", "radiusAlarm", "forecastHorizonH", "priorities"]) delete src[k];
  if (typeof src.minDamping === "number") delete src.minDamping;
  if (typeof src.deadband === "number") delete src.deadband;
  // Fields of the retired `sluggish` condition (migration 0104 removes them; a row restored from an
  // older backup may still hold them): they no longer mean anything to an operator alarm.
  delete src.sluggishMultiple;
  for (const k of ["deadband", "enabled"]) {
    const v = src[k];
    if (v && typeof v === "object" && !Array.isArray(v)) src[k] = Object.fromEntries(Object.entries(v).filter(([f]) => f !== "sluggish"));
  }
  return { ...src, ...out };
}
