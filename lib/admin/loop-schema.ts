/**
 * The loop configuration form's schema, shared by the browser form (react-hook-form + zod) and
 * the route handlers, so both refuse the same input with the same words. Pure: no I/O.
 */
import { z } from "zod";
import { derivativeTimeSeconds, integralTimeSeconds } from "@/lib/domain/tuning";
import { text } from "@/lib/text-input";
import { LOOP_KINDS } from "@/lib/domain/types";

/*
 * Physically meaningful ranges. These are common practice for process control loops, chosen for
 * Rimguard (no single published source): they refuse values no real controller or transmitter has
 * (5e-324 s, 1e300 %/%) while leaving every plausible tuning in.
 * - sample periods (telemetry, controller scan, estimation): 0.01 s to 3600 s;
 * - controller gain |Kc| 1e-4 to 1e4 %/%, i.e. a proportional band (100/Kc %) of 0.01 % to 1e6 %;
 * - integral time 0.01 s to 1 day (in s, min or the equivalent repeats per minute);
 * - derivative time 0 (off) or 0.01 s to 1 day; derivative filter 0 (none) or 1 ms to 1e4 s;
 * - baseline time constant 0.01 s to one week;
 * - range limits finite and within ±1e12 engineering units, high above low by at least 1e-9
 *   units and 1e-6 of the larger magnitude (a narrower span cannot be resolved by any transmitter).
 */
export const LIMITS = {
  periodS: [0.01, 3600],
  gain: [1e-4, 1e4],
  tiS: [0.01, 86_400],
  tdS: [0.01, 86_400],
  tfS: [0.001, 1e4],
  baselineS: [0.01, 7 * 86_400],
  deadTimeS: [0, 86_400],
  rangeAbs: 1e12,
  minSpan: 1e-9,
  relativeSpan: 1e-6,
} as const;

const num = (what: string) => z.number({ error: `${what} must be a number.` });
const inRange = (what: string, [lo, hi]: readonly [number, number], unit: string) =>
  num(what).min(lo, `${what} must be at least ${lo} ${unit}.`).max(hi, `${what} must be at most ${hi} ${unit}.`);
const rangeEnd = (what: string) => num(what).min(-LIMITS.rangeAbs, `${what} must be within ±1e12.`).max(LIMITS.rangeAbs, `${what} must be within ±1e12.`);
const positive = (what: string) => num(what).gt(0, `${what} must be above 0.`);

export const loopFieldsSchema = z
  .object({
    siteId: z.number().int().positive("Choose a site."),
    areaId: z.number().int().positive().nullable(),
    tag: text()
      .trim()
      .min(1, "A tag is required.")
      .max(64, "At most 64 characters.")
      .regex(/^[A-Za-z0-9][A-Za-z0-9_.\-/ ]*$/, "Letters, digits, space, - _ . / only, starting with a letter or digit."),
    description: text().trim().max(255, "At most 255 characters."),
    kind: z.enum(LOOP_KINDS),
    units: text().trim().min(1, "PV units are required.").max(32),
    pvLo: rangeEnd("PV range low"),
    pvHi: rangeEnd("PV range high"),
    mvLo: rangeEnd("MV range low"),
    mvHi: rangeEnd("MV range high"),
    mvUnits: text().trim().min(1).max(32),
    telemetryPeriodS: inRange("Telemetry period", LIMITS.periodS, "s"),
    controllerPeriodS: inRange("Controller period", LIMITS.periodS, "s"),
    action: z.enum(["direct", "reverse"]),
    form: z.enum(["ideal", "parallel", "series"]),
    gainKind: z.enum(["gain", "pb"]),
    // Checked against gainKind in checkRanges; here only what holds for both kinds.
    gainValue: positive("Gain / proportional band").max(1e6, "Gain / proportional band must be at most 1e6."),
    tiValue: positive("Integral").nullable(),
    tiUnits: z.enum(["s", "min", "repeats-per-min"]),
    tdValue: num("Derivative time").min(0, "Derivative time cannot be negative."),
    tdUnits: z.enum(["s", "min"]),
    tfS: num("Derivative filter").min(0, "Derivative filter cannot be negative.").max(LIMITS.tfS[1], `Derivative filter must be at most ${LIMITS.tfS[1]} s.`).nullable(),
    na: z.number().int().min(1, "A order at least 1.").max(6, "A order at most 6."),
    nb: z.number().int().min(1, "At least one B coefficient.").max(6, "At most 6 B coefficients."),
    nk: z.number().int().min(1, "Delay at least 1 period.").max(120, "At most 120 periods."),
    estimationPeriodS: inRange("Estimation period", LIMITS.periodS, "s"),
    baselineTimeConstantS: inRange("Baseline time constant", LIMITS.baselineS, "s").nullable(),
    /** Dead time, s (Harris index of the routine assessment); null = take it from the latest applied step test, if any. */
    deadTimeS: inRange("Dead time", LIMITS.deadTimeS, "s").nullable().optional(),
    enabled: z.boolean(),
    /** Weight in the worst-loops score: 1 low .. 5 critical (3 = normal, weight 1). */
    criticality: z.number({ error: "Criticality must be a number." }).int().min(1, "Criticality 1 to 5.").max(5, "Criticality 1 to 5.").optional(),
  })
  .strict();


function checkRanges(v: Partial<z.infer<typeof loopFieldsSchema>>, ctx: z.RefinementCtx) {
  const issue = (path: string, message: string) => ctx.addIssue({ code: "custom", path: [path], message });
  const span = (lo: number | undefined, hi: number | undefined, path: string, what: string) => {
    if (lo === undefined || hi === undefined) return;
    if (!(hi > lo)) issue(path, `${what} range high must be above low.`);
    else if (hi - lo < Math.max(LIMITS.minSpan, LIMITS.relativeSpan * Math.max(Math.abs(lo), Math.abs(hi))))
      issue(path, `${what} range is too narrow (span below 1e-9 or below 1e-6 of its magnitude).`);
  };
  span(v.pvLo, v.pvHi, "pvHi", "PV");
  span(v.mvLo, v.mvHi, "mvHi", "MV");
  if (v.estimationPeriodS !== undefined && v.telemetryPeriodS !== undefined && v.estimationPeriodS < v.telemetryPeriodS)
    issue("estimationPeriodS", "The estimation period cannot be shorter than the telemetry period (it is a decimation).");
  if (v.gainValue !== undefined && v.gainKind !== undefined) {
    const kc = v.gainKind === "gain" ? v.gainValue : 100 / v.gainValue;
    if (!(kc >= LIMITS.gain[0] && kc <= LIMITS.gain[1]))
      issue("gainValue", v.gainKind === "gain" ? "Controller gain must be between 1e-4 and 1e4 %/%." : "Proportional band must be between 0.01 % and 1e6 %.");
  }
  if (v.tiValue != null && v.tiUnits !== undefined) {
    const ti = integralTimeSeconds(v.tiValue, v.tiUnits);
    if (!(ti >= LIMITS.tiS[0] && ti <= LIMITS.tiS[1])) issue("tiValue", "Integral time must be between 0.01 s and 1 day.");
  }
  if (v.tdValue !== undefined && v.tdValue !== 0 && v.tdUnits !== undefined) {
    const td = derivativeTimeSeconds(v.tdValue, v.tdUnits);
    if (!(td >= LIMITS.tdS[0] && td <= LIMITS.tdS[1])) issue("tdValue", "Derivative time must be 0 (off) or between 0.01 s and 1 day.");
  }
  if (v.tfS != null && v.tfS !== 0 && v.tfS < LIMITS.tfS[0]) issue("tfS", "Derivative filter must be 0 (none) or at least 0.001 s.");
}

/** A whole loop configuration (e.g. a stored loop with a patch applied): every field and cross-field rule. */
export const loopConfigSchema = loopFieldsSchema.superRefine(checkRanges);

const changeReason = text().trim().min(5, "Give a change reason (at least 5 characters).").max(1000);
const mocReference = text().trim().max(64).optional().nullable();

/** `POST /api/loops` body. */
export const createLoopSchema = loopFieldsSchema.extend({ reason: changeReason, mocReference }).superRefine(checkRanges);
/** `PATCH /api/loops/[loopId]` body: any subset of fields plus the reason. */
export const updateLoopSchema = loopFieldsSchema.partial().extend({ reason: changeReason, mocReference }).superRefine(checkRanges);

export type LoopFields = z.infer<typeof loopFieldsSchema>;
export type CreateLoopInput = z.infer<typeof createLoopSchema>;
export type UpdateLoopInput = z.infer<typeof updateLoopSchema>;

/** Defaults of a new loop's form (a flow loop with a PI controller at 1 s). */
export const NEW_LOOP_DEFAULTS: Omit<LoopFields, "siteId"> = {
  areaId: null,
  tag: "",
  description: "",
  kind: "flow",
  units: "m³/h",
  pvLo: 0,
  pvHi: 100,
  mvLo: 0,
  mvHi: 100,
  mvUnits: "%",
  telemetryPeriodS: 1,
  controllerPeriodS: 1,
  action: "reverse",
  form: "ideal",
  gainKind: "gain",
  gainValue: 1,
  tiValue: 30,
  tiUnits: "s",
  tdValue: 0,
  tdUnits: "s",
  tfS: null,
  na: 2,
  nb: 2,
  nk: 1,
  estimationPeriodS: 1,
  baselineTimeConstantS: null,
  deadTimeS: null,
  enabled: true,
  criticality: 3,
};
