/**
 * Drift scenarios: a JSON format of our own (simulators/scenarios/*.json), validated with zod
 * on load. A scenario says, per loop tag, which drifts happen when, and sets the background
 * activity every simulated loop sees (measurement noise, load disturbances, set-point moves,
 * spells in manual). It may also define loops inline (tests, load runs without a database).
 *
 * Units: times in seconds of simulated time from the start of the run; PV quantities in % of
 * the PV span; MV quantities in % of the MV span; plant gains in % PV per % MV.
 */
import { readFile } from "node:fs/promises";
import { z } from "zod";

const seconds = z.number().finite().nonnegative();
const positiveSeconds = z.number().finite().positive();
const pct = z.number().finite();

export const plantSpecSchema = z.discriminatedUnion("type", [
  z.object({
    type: z.literal("first-order"),
    /** Process gain, % PV per % MV (negative for a reverse-acting process). */
    gain: z.number().finite().refine((v) => v !== 0, "gain must not be 0"),
    timeConstantS: positiveSeconds,
    deadTimeS: seconds.default(0),
  }),
  z.object({
    type: z.literal("second-order"),
    gain: z.number().finite().refine((v) => v !== 0, "gain must not be 0"),
    /** Natural frequency, rad/s. */
    naturalFrequency: z.number().finite().positive(),
    /** Damping ratio of the open-loop plant, 0 < zeta < 1 (underdamped). */
    zeta: z.number().finite().gt(0).lt(1),
    deadTimeS: seconds.default(0),
  }),
  z.object({
    type: z.literal("integrating"),
    /** Rate gain: % PV per second per % MV. */
    gain: z.number().finite().refine((v) => v !== 0, "gain must not be 0"),
    /** Optional first-order lag in series with the integrator, seconds (0 = none). */
    lagS: seconds.default(0),
    deadTimeS: seconds.default(0),
  }),
]);
export type PlantSpec = z.infer<typeof plantSpecSchema>;

export const controllerSpecSchema = z.object({
  /** Proportional gain, % MV per % PV (always > 0; `action` gives the sign). */
  kp: z.number().finite().positive(),
  /** Integral time, seconds (null = no integral action). */
  ti: z.number().finite().positive().nullable(),
  /** Derivative time, seconds (0 = none). */
  td: seconds.default(0),
  /** Derivative filter time constant, seconds (0 = td / 10). */
  tf: seconds.default(0),
  action: z.enum(["reverse", "direct"]).default("reverse"),
  form: z.enum(["ideal", "parallel", "series"]).default("ideal"),
});
export type ControllerSpec = z.infer<typeof controllerSpecSchema>;

export const driftSchema = z.discriminatedUnion("kind", [
  z
    .object({
      kind: z.literal("gain-creep"),
      startS: seconds,
      /** Time to reach the final gain, linearly; 0 = a step. */
      durationS: seconds,
      /** Process gain multiplier at the end (e.g. 2.5). */
      toFactor: z.number().finite().positive().optional(),
      /** Or: the end multiplier as a fraction of the loop's own gain headroom (1 = on the rim). */
      toHeadroom: z.number().finite().positive().max(1.5).optional(),
    })
    .refine((d) => (d.toFactor === undefined) !== (d.toHeadroom === undefined), {
      message: "give exactly one of toFactor and toHeadroom",
      path: ["toFactor"],
    }),
  z.object({
    kind: z.literal("dead-time-growth"),
    startS: seconds,
    durationS: seconds,
    /** Dead time added by the end, seconds (quantised to the controller period). */
    addS: positiveSeconds,
  }),
  z.object({
    kind: z.literal("sticky-valve"),
    startS: seconds,
    /** Stiction band S (dead band plus stick band), % of MV span. */
    stictionPct: z.number().finite().positive().max(50),
    /** Slip jump J, % of MV span (J <= S). */
    slipPct: z.number().finite().nonnegative().max(50),
  }),
  z.object({
    kind: z.literal("manual-switch"),
    startS: seconds,
    /** How long the loop stays in manual; null = until the end of the run. */
    durationS: positiveSeconds.nullable().default(null),
    /** Operator moves while in manual: absolute MV in % of span, `afterS` from the switch. */
    moves: z.array(z.object({ afterS: seconds, mvPct: pct.min(0).max(100) })).default([]),
  }),
  z.object({
    kind: z.literal("frozen-sensor"),
    startS: seconds,
    durationS: positiveSeconds.nullable().default(null),
  }),
  z.object({
    kind: z.literal("saturation"),
    startS: seconds,
    /** A load step at the plant input, % of MV span, big enough to drive the MV to a limit. */
    loadPct: pct.refine((v) => v !== 0, "loadPct must not be 0"),
    /** How long the load stays; null = until the end of the run. */
    durationS: positiveSeconds.nullable().default(null),
  }),
  z.object({
    /** A sinusoidal load from outside the loop (e.g. an upstream unit cycling), at the plant input. */
    kind: z.literal("outside-oscillation"),
    startS: seconds,
    /** Amplitude, % of MV span. */
    amplitudePct: pct.refine((v) => v > 0, "amplitudePct must be > 0"),
    periodS: positiveSeconds,
    durationS: positiveSeconds.nullable().default(null),
  }),
]);
export type DriftSpec = z.infer<typeof driftSchema>;
export type DriftKind = DriftSpec["kind"];

export const activitySchema = z.object({
  /** Measurement noise standard deviation, % of PV span. */
  noiseSdPct: z.number().finite().nonnegative().default(0.2),
  /** Random load steps at the plant input: mean interval (s, 0 = none) and size sd (% MV). */
  loadStepEveryS: seconds.default(600),
  loadStepSdPct: z.number().finite().nonnegative().default(3),
  /** Slow random-walk load at the plant input, sd per square-root second (% MV). */
  loadWalkSdPct: z.number().finite().nonnegative().default(0.02),
  /** Set-point moves: mean interval (s, 0 = none) and size sd (% PV span). */
  setpointEveryS: seconds.default(900),
  setpointSdPct: z.number().finite().nonnegative().default(4),
  /** Spells in manual: mean interval (s, 0 = none) and length (s). */
  manualEveryS: seconds.default(0),
  manualDurationS: positiveSeconds.default(300),
});
export type ActivitySpec = z.infer<typeof activitySchema>;

export const inlineLoopSchema = z.object({
  tenantSlug: z.string().regex(/^[a-z0-9]+(?:-[a-z0-9]+)*$/, "tenantSlug must be a slug [a-z0-9-]"),
  siteSlug: z.string().regex(/^[a-z0-9]+(?:-[a-z0-9]+)*$/, "siteSlug must be a slug [a-z0-9-]"),
  tag: z.string().min(1),
  telemetryPeriodS: positiveSeconds,
  controllerPeriodS: positiveSeconds,
  plant: plantSpecSchema,
  controller: controllerSpecSchema,
  pvRange: z.tuple([z.number().finite(), z.number().finite()]).refine(([lo, hi]) => hi > lo, "pvRange must be [lo, hi] with hi > lo"),
  mvRange: z.tuple([z.number().finite(), z.number().finite()]).default([0, 100]).refine(([lo, hi]) => hi > lo, "mvRange must be [lo, hi] with hi > lo"),
  /** MV limits in % of the MV span. */
  mvLimitsPct: z.tuple([pct, pct]).default([0, 100]).refine(([lo, hi]) => hi > lo, "mvLimitsPct must be [lo, hi] with hi > lo"),
  /** Initial set point, % of PV span. */
  spPct: pct.min(0).max(100).default(50),
  /** MV at the operating point, % of MV span. */
  mvPct: pct.min(0).max(100).default(50),
});
export type InlineLoop = z.infer<typeof inlineLoopSchema>;

export const scenarioSchema = z
  .object({
    name: z.string().min(1),
    description: z.string().default(""),
    /** Overrides SIM_SEED when present. */
    seed: z.number().int().optional(),
    activity: activitySchema.default(activitySchema.parse({})),
    /** Per-tag settings (tags as in the loop configuration, e.g. "FIC-101"). */
    loops: z
      .array(
        z.object({
          tag: z.string().min(1),
          activity: activitySchema.partial().optional(),
          drift: z.array(driftSchema).default([]),
        }),
      )
      .default([]),
    /** Loops defined in the scenario itself (no database or seed needed). */
    inlineLoops: z.array(inlineLoopSchema).default([]),
  })
  .strict()
  .superRefine((s, ctx) => {
    const seen = new Set<string>();
    s.loops.forEach((l, i) => {
      if (seen.has(l.tag)) ctx.addIssue({ code: "custom", path: ["loops", i, "tag"], message: `tag ${l.tag} is listed twice` });
      seen.add(l.tag);
      l.drift.forEach((d, j) => {
        if (d.kind === "sticky-valve" && d.slipPct > d.stictionPct) {
          ctx.addIssue({ code: "custom", path: ["loops", i, "drift", j, "slipPct"], message: "slipPct must not exceed stictionPct" });
        }
      });
    });
  });
export type Scenario = z.infer<typeof scenarioSchema>;

/** A scenario file that failed validation; the message lists every problem with its JSON path. */
export class ScenarioError extends Error {
  constructor(
    readonly source: string,
    readonly problems: string[],
  ) {
    super(`Invalid scenario ${source}:\n${problems.map((p) => `  - ${p}`).join("\n")}`);
    this.name = "ScenarioError";
  }
}

/** Validate a parsed JSON value as a scenario; throws ScenarioError naming each bad field. */
export function parseScenario(value: unknown, source = "(inline)"): Scenario {
  const r = scenarioSchema.safeParse(value);
  if (!r.success) {
    throw new ScenarioError(
      source,
      r.error.issues.map((i) => `${i.path.length ? i.path.join(".") : "(root)"}: ${i.message}`),
    );
  }
  return r.data;
}

/** Read and validate a scenario file (JSON). */
export async function loadScenario(file: string): Promise<Scenario> {
  let text: string;
  try {
    text = await readFile(file, "utf8");
  } catch (e) {
    throw new ScenarioError(file, [`cannot read the file: ${(e as Error).message}`]);
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (e) {
    throw new ScenarioError(file, [`not valid JSON: ${(e as Error).message}`]);
  }
  return parseScenario(json, file);
}
