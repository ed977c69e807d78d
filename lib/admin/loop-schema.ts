/**
 * The loop configuration form's schema, shared by the browser form (react-hook-form + zod) and
 * the route handlers, so both refuse the same input with the same words. Pure: no I/O.
 */
import { z } from "zod";
import { LOOP_KINDS } from "@/lib/types";

const positive = (what: string) => z.number({ error: `${what} must be a number.` }).gt(0, `${what} must be above 0.`);

export const loopFieldsSchema = z
  .object({
    siteId: z.number().int().positive("Choose a site."),
    areaId: z.number().int().positive().nullable(),
    tag: z
      .string()
      .trim()
      .min(1, "A tag is required.")
      .max(64, "At most 64 characters.")
      .regex(/^[A-Za-z0-9][A-Za-z0-9_.\-/ ]*$/, "Letters, digits, space, - _ . / only, starting with a letter or digit."),
    description: z.string().trim().max(255, "At most 255 characters."),
    kind: z.enum(LOOP_KINDS),
    units: z.string().trim().min(1, "PV units are required.").max(32),
    pvLo: z.number({ error: "PV range low must be a number." }),
    pvHi: z.number({ error: "PV range high must be a number." }),
    mvLo: z.number(),
    mvHi: z.number(),
    mvUnits: z.string().trim().min(1).max(32),
    telemetryPeriodS: positive("Telemetry period").max(3600, "At most 3600 s."),
    controllerPeriodS: positive("Controller period").max(3600, "At most 3600 s."),
    action: z.enum(["direct", "reverse"]),
    form: z.enum(["ideal", "parallel", "series"]),
    gainKind: z.enum(["gain", "pb"]),
    gainValue: positive("Gain / proportional band").max(10000),
    tiValue: positive("Integral").max(1e6).nullable(),
    tiUnits: z.enum(["s", "min", "repeats-per-min"]),
    tdValue: z.number().min(0, "Derivative time cannot be negative.").max(1e5),
    tdUnits: z.enum(["s", "min"]),
    tfS: z.number().min(0).max(1e4).nullable(),
    na: z.number().int().min(1, "A order at least 1.").max(6, "A order at most 6."),
    nb: z.number().int().min(1, "At least one B coefficient.").max(6, "At most 6 B coefficients."),
    nk: z.number().int().min(1, "Delay at least 1 period.").max(120, "At most 120 periods."),
    estimationPeriodS: positive("Estimation period").max(3600, "At most 3600 s."),
    baselineTimeConstantS: positive("Baseline time constant").nullable(),
    enabled: z.boolean(),
    /** Weight in the worst-loops score: 1 low .. 5 critical (3 = normal, weight 1). */
    criticality: z.number({ error: "Criticality must be a number." }).int().min(1, "Criticality 1 to 5.").max(5, "Criticality 1 to 5.").optional(),
  })
  .strict();

function checkRanges(v: Partial<z.infer<typeof loopFieldsSchema>>, ctx: z.RefinementCtx) {
  if (v.pvLo !== undefined && v.pvHi !== undefined && !(v.pvHi > v.pvLo)) ctx.addIssue({ code: "custom", path: ["pvHi"], message: "PV range high must be above low." });
  if (v.mvLo !== undefined && v.mvHi !== undefined && !(v.mvHi > v.mvLo)) ctx.addIssue({ code: "custom", path: ["mvHi"], message: "MV range high must be above low." });
  if (v.estimationPeriodS !== undefined && v.telemetryPeriodS !== undefined && v.estimationPeriodS < v.telemetryPeriodS)
    ctx.addIssue({ code: "custom", path: ["estimationPeriodS"], message: "The estimation period cannot be shorter than the telemetry period (it is a decimation)." });
}

const changeReason = z.string().trim().min(5, "Give a change reason (at least 5 characters).").max(1000);
const mocReference = z.string().trim().max(64).optional().nullable();

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
  enabled: true,
  criticality: 3,
};
