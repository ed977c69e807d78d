/**
 * Step tests in MariaDB (table step_tests) and the loop columns a step test reads and may change.
 * The parsing, identification and object storage are lib/step-tests; this is their SQL.
 */
import "server-only";
import { literal } from "sequelize";
import { getDb } from "@/lib/data/db/sequelize";
import { logConfigChange, type ConfigChangeEntry } from "@/lib/data/admin/config-log";
import { findOwned, scoped } from "@/lib/data/tenancy";
import { NotFoundError } from "@/lib/domain/errors";
import type { QualityRange } from "@/lib/domain/sample-quality";
import type { LoopSummary, TenantContext } from "@/lib/domain/types";

/** What a step test needs of its loop: its tag, PV units, configured PV and MV ranges and periods. */
export interface StepTestLoop extends Pick<LoopSummary, "id" | "tag" | "units">, QualityRange {
  mvUnits: string;
  telemetryPeriodS: number;
  estimationPeriodS: number;
  estimationProposedS: number | null;
  na: number;
  nb: number;
  nk: number;
}

/** One stored step test; `result` as stored (JSON text or parsed). */
export interface StepTestRow {
  id: number;
  loopId: number;
  filename: string;
  periodS: number;
  rowCount: number;
  createdAt: Date;
  uploadedBy: number | null;
  result: unknown;
  objectKey: string;
}

/** JSON paths of the headline numbers in `result`, read by the database (the list never loads whole results). */
export const STEP_TEST_HEADLINE = {
  fitPercent: "$.identification.fitPercent",
  gainPercent: "$.continuous.gainPercent",
  timeConstantS: "$.continuous.timeConstantS",
  deadTimeS: "$.continuous.deadTimeS",
  proposedPeriodS: "$.proposal.estimationPeriodS",
} as const;

export type StepTestHeadlineRow = Omit<StepTestRow, "result" | "objectKey"> & Record<keyof typeof STEP_TEST_HEADLINE, unknown>;

/** The caller's loop (404 for another tenant's or site's). */
export async function readStepTestLoop(ctx: TenantContext, loopId: number): Promise<StepTestLoop> {
  const loop = await findOwned(getDb().models.Loop, ctx, loopId);
  if (!loop) throw new NotFoundError("Loop");
  const l = loop.get({ plain: true });
  return {
    id: l.id,
    tag: l.tag,
    units: l.units,
    mvUnits: l.mvUnits,
    pvLo: l.pvLo,
    pvHi: l.pvHi,
    mvLo: l.mvLo,
    mvHi: l.mvHi,
    telemetryPeriodS: l.telemetryPeriodS,
    estimationPeriodS: l.estimationPeriodS,
    estimationProposedS: l.estimationProposedS,
    na: l.na,
    nb: l.nb,
    nk: l.nk,
  };
}

export async function insertStepTest(
  ctx: TenantContext,
  fields: Pick<StepTestRow, "loopId" | "objectKey" | "filename" | "periodS" | "rowCount" | "result">,
): Promise<StepTestRow> {
  const row = await getDb().models.StepTest.create({ tenantId: ctx.tenantId, uploadedBy: ctx.userId, ...fields } as never);
  return row.get({ plain: true }) as unknown as StepTestRow;
}

/** A loop's step tests with their headline numbers, newest first (at most 200). */
export async function readStepTestHeadlines(ctx: TenantContext, loopId: number): Promise<StepTestHeadlineRow[]> {
  const rows = await scoped(ctx).findAll(getDb().models.StepTest, {
    where: { loopId },
    attributes: [
      "id",
      "loopId",
      "filename",
      "periodS",
      "rowCount",
      "createdAt",
      "uploadedBy",
      ...Object.entries(STEP_TEST_HEADLINE).map(([k, path]) => [literal(`JSON_VALUE(result, '${path}')`), k] as [ReturnType<typeof literal>, string]),
    ],
    order: [["createdAt", "DESC"], ["id", "DESC"]],
    limit: 200,
    raw: true,
  });
  return rows as unknown as StepTestHeadlineRow[];
}

/** One step test of the caller's loop, or null. */
export async function readStepTest(ctx: TenantContext, loopId: number, stepTestId: number): Promise<StepTestRow | null> {
  const row = await findOwned(getDb().models.StepTest, ctx, stepTestId);
  if (!row || row.loopId !== loopId) return null;
  return row.get({ plain: true }) as unknown as StepTestRow;
}

/** Change a loop's estimation settings with its config_changes entry, in one transaction. */
export async function patchLoopEstimation(
  ctx: TenantContext,
  loopId: number,
  patch: Partial<Pick<StepTestLoop, "estimationPeriodS" | "estimationProposedS" | "na" | "nb" | "nk">>,
  entry: ConfigChangeEntry,
): Promise<void> {
  const { sequelize, models } = getDb();
  await sequelize.transaction(async (transaction) => {
    // Through the instance, so the model's whole-row rules see the stored row with the patch.
    const loop = await findOwned(models.Loop, ctx, loopId, { transaction });
    if (!loop) throw new NotFoundError("Loop");
    await loop.update(patch, { transaction });
    await logConfigChange(ctx, entry, transaction);
  });
}
