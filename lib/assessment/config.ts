/**
 * The loop as an engineer enters it for an assessment (LOOP.json of the `assess` command).
 * Gains in engineers' units: kp in % of MV per % of PV span, ti/td in seconds. Extra fields are
 * ignored so a fuller loop record can be passed as it is.
 */
import { z } from "zod";
import { normaliseLoopJson } from "./input-checks";

const finite = z.number().refine(Number.isFinite, "must be a finite number");

export const controllerConfigSchema = z.object({
  kp: finite.refine((v) => v >= 0, "must be >= 0"),
  /** Integral time, s; null or 0 for none. */
  ti: finite.refine((v) => v >= 0, "must be >= 0").nullable().optional().default(null),
  td: finite.refine((v) => v >= 0, "must be >= 0").nullable().optional().default(0),
  action: z.enum(["reverse", "direct"]).default("reverse"),
  mvLo: finite.default(0),
  mvHi: finite.default(100),
  form: z.enum(["ideal", "parallel", "series"]).default("ideal"),
  derivativeOn: z.enum(["pv", "error"]).default("pv"),
  derivativeFilterS: finite.refine((v) => v >= 0, "must be >= 0").nullable().optional().default(null),
});

export const loopConfigSchema = z
  .object({
    tag: z.string().default(""),
    description: z.string().default(""),
    kind: z.enum(["flow", "level", "pressure", "temperature", "other"]).default("other"),
    units: z.string().default(""),
    pvLo: finite,
    pvHi: finite,
    samplePeriodS: finite.refine((v) => v > 0, "must be > 0"),
    /**
     * Apparent dead time, s: the delay a step test shows (the transport delay plus about half the
     * process's second lag, Skogestad's half rule), which the tuning yardsticks are stated against;
     * docs/assessment.md, "Harris index", "Which dead time".
     */
    deadTimeS: finite.refine((v) => v >= 0, "must be >= 0").nullable().optional().default(null),
    /**
     * The apparent dead time of the loop's latest applied step test, s, when it has one and the
     * engineer's `deadTimeS` is set as well (the live loader fills it). Only compared with
     * `deadTimeS` for a caution (deadTimeCaution); the figures use `deadTimeS`.
     */
    stepTestDeadTimeS: finite.refine((v) => v >= 0, "must be >= 0").nullable().optional().default(null),
    normalMode: z.enum(["auto", "cascade"]).default("auto"),
    controller: controllerConfigSchema,
  })
  .refine((c) => c.pvHi > c.pvLo, { message: "pvHi must be greater than pvLo", path: ["pvHi"] })
  .refine((c) => c.controller.mvHi > c.controller.mvLo, { message: "mvHi must be greater than mvLo", path: ["controller", "mvHi"] });

export type LoopConfig = z.infer<typeof loopConfigSchema>;
export type LoopConfigInput = z.input<typeof loopConfigSchema>;

export class LoopConfigError extends Error {
  constructor(readonly issues: string[]) {
    super(`Loop configuration: ${issues.join("; ")}`);
    this.name = "LoopConfigError";
  }
}

/**
 * Checks a parsed JSON value; throws LoopConfigError naming each field at fault. Numbers written
 * as strings of a plain decimal number and enum words in other letter cases are read first.
 */
export function parseLoopConfig(value: unknown): LoopConfig {
  const r = loopConfigSchema.safeParse(normaliseLoopJson(value));
  if (r.success) return r.data;
  throw new LoopConfigError(r.error.issues.map((i) => `${i.path.length ? i.path.join(".") : "(root)"}: ${i.message}`));
}

/** Integral time in s, or null when the controller has no integral action. */
export function integralTime(c: LoopConfig): number | null {
  const ti = c.controller.ti;
  return ti !== null && ti !== undefined && ti > 0 && Number.isFinite(ti) ? ti : null;
}

/** Outside this ratio of the configured to the step test's dead time a caution names both (ours). */
export const DEAD_TIME_DISAGREEMENT = 1.5;

/**
 * A caution when the configured dead time and the latest applied step test's disagree by more than
 * DEAD_TIME_DISAGREEMENT either way; null otherwise. The figures keep the configured one (the
 * engineer's entry wins); the caution says which way each disagreement pushes the tuning findings
 * (docs/assessment.md, "Harris index", "Which dead time").
 */
export function deadTimeCaution(c: Pick<LoopConfig, "deadTimeS" | "stepTestDeadTimeS">): string | null {
  const a = c.deadTimeS;
  const b = c.stepTestDeadTimeS;
  if (a === null || a === undefined || b === null || b === undefined || !(a > 0) || !(b > 0)) return null;
  const s = (v: number) => Number(v.toPrecision(3)).toString();
  if (a * DEAD_TIME_DISAGREEMENT < b)
    return `The configured dead time (${s(a)} s) is well under the apparent dead time of the loop's latest applied step test (${s(b)} s). The Harris index and the sluggish-tuning yardsticks are read against the configured one; if it is the transport delay alone, a well-tuned loop on a process with a second lag reads sluggish. Enter the apparent dead time if the step test still holds.`;
  if (a > DEAD_TIME_DISAGREEMENT * b)
    return `The configured dead time (${s(a)} s) is well over the apparent dead time of the loop's latest applied step test (${s(b)} s). The Harris index and the sluggish-tuning yardsticks are read against the configured one, and a dead time too long makes them lenient: a sluggish loop may read healthy. Check which one still holds.`;
  return null;
}

/** True for loops whose process integrates (level), where PV increments replace PV (Horch). */
export function isIntegrating(c: LoopConfig): boolean {
  return c.kind === "level";
}
