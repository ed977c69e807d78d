/**
 * Loops as the routine-data assessment reads them: the offline command's LOOP.json fields from the
 * one loops reader (lib/data/loop-rows.ts): kind, PV range, telemetry period, tuning in seconds with
 * the loop's own derivative filter, MV limits, dead time. The dead time is the engineer's
 * (`loops.dead_time_s`), else that of the loop's latest step test whose proposal was applied
 * (accepted) to the loop, else none: the Harris index is then null with a caution (routine
 * closed-loop data cannot tell the dead time). Where the engineer's value is set and an applied step
 * test has one too, the step test's rides along as `stepTestDeadTimeS` for a caution when the two
 * disagree (lib/assessment/config.ts, deadTimeCaution). With the loop's baseline time constant comes its
 * tenant's sluggish-tuning multiple (work-list settings; absent = the default).
 *
 * One home for both users: the live assessment (server/assessment/loop-configs.ts) and the
 * assessment of an uploaded historian export (lib/export-assessments).
 */
import type { Sequelize } from "sequelize";
import { parseLoopConfig, type LoopConfig } from "@/lib/assessment";
import { loopTuningSeconds, mvLimits, readLoops } from "@/lib/data/loop-rows";
import { selectStepDeadTimes } from "@/lib/data/work-list";
import { selectSluggishMultiples } from "@/lib/data/work-list-settings";

const KINDS = new Set(["flow", "level", "pressure", "temperature"]);

export interface AssessedLoop {
  loopId: number;
  tenantId: number;
  siteId: number;
  config: LoopConfig;
  baselineTimeConstantS: number | null;
  sluggishMultiple?: number;
}

/** Enabled loops with a usable configuration (a bad row is skipped with its reason). */
export async function loadAssessmentConfigs(sequelize: Sequelize, loopId?: number): Promise<{ loops: AssessedLoop[]; errors: Map<number, string> }> {
  const loops: AssessedLoop[] = [];
  const errors = new Map<number, string>();
  const rows = await readLoops(sequelize, loopId);
  const stepDeadTimes = rows.some((l) => l.enabled) ? await selectStepDeadTimes(sequelize, loopId) : new Map<number, number>();
  const multiples = rows.some((l) => l.enabled && l.baselineTimeConstantS !== null) ? await selectSluggishMultiples(sequelize) : new Map<number, number>();
  for (const l of rows) {
    if (!l.enabled) continue;
    try {
      const tuning = loopTuningSeconds(l);
      const mv = mvLimits(l);
      const config = parseLoopConfig({
        tag: l.tag,
        description: l.description,
        kind: KINDS.has(l.kind) ? l.kind : "other",
        units: l.units,
        pvLo: l.pvLo,
        pvHi: l.pvHi,
        samplePeriodS: l.telemetryPeriodS,
        deadTimeS: deadTimeOf(l.deadTimeS, stepDeadTimes.get(l.id)),
        // beside the engineer's value, the step test's for a caution when the two disagree (deadTimeCaution)
        stepTestDeadTimeS: deadTimeOf(l.deadTimeS, undefined) !== null ? deadTimeOf(null, stepDeadTimes.get(l.id)) : null,
        normalMode: "auto",
        controller: {
          kp: tuning.kp,
          ti: tuning.ti,
          td: tuning.td,
          action: tuning.action,
          mvLo: mv.lo,
          mvHi: mv.hi,
          form: tuning.form,
          derivativeFilterS: tuning.td > 0 ? tuning.tf : null,
        },
      });
      loops.push({ loopId: l.id, tenantId: l.tenantId, siteId: l.siteId, config, baselineTimeConstantS: l.baselineTimeConstantS, sluggishMultiple: multiples.get(l.tenantId) });
    } catch (e) {
      errors.set(l.id, e instanceof Error ? e.message : String(e));
    }
  }
  return { loops, errors };
}

/** The engineer's dead time, else the latest applied step test's, else null (s; a negative or non-finite value counts as none). */
function deadTimeOf(configured: number | null, fromStepTest: number | undefined): number | null {
  for (const x of [configured, fromStepTest]) {
    if (x !== null && x !== undefined && Number.isFinite(x) && x >= 0) return x;
  }
  return null;
}
