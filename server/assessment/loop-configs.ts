/**
 * Loops as the live assessment needs them: lib/data/assessment-configs.ts (the one reader, shared
 * with the assessment of an uploaded historian export), typed as the assessor's LiveLoop.
 */
import type { Sequelize } from "sequelize";
import { loadAssessmentConfigs } from "@/lib/data/assessment-configs";
import type { LiveLoop } from "./assessor";

/** Enabled loops with a usable configuration (a bad row is skipped with its reason). */
export async function loadLiveLoops(sequelize: Sequelize, loopId?: number): Promise<{ loops: LiveLoop[]; errors: Map<number, string> }> {
  return loadAssessmentConfigs(sequelize, loopId);
}
