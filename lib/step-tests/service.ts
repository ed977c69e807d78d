/**
 * Step tests as the routes see them: upload (parse, identify, store the file, record the row),
 * list, read a result, fetch the original file, and apply a proposal to the loop (logged in
 * config_changes). Nothing is stored unless the whole upload succeeds: the file is parsed and
 * identified in memory first, and the object is removed again if the row cannot be written.
 */
import { randomUUID } from "node:crypto";
import { z } from "zod";
import { text } from "@/lib/text-input";
import { diffOf } from "@/lib/data/admin/config-log";
import { LIMITS } from "@/lib/admin/loop-schema";
import {
  insertStepTest,
  patchLoopEstimation,
  readStepTest,
  readStepTestHeadlines,
  readStepTestLoop,
  type StepTestLoop,
  type StepTestRow,
} from "@/lib/data/step-tests";
import { ConflictError, HttpError, NotFoundError, ValidationError } from "@/lib/domain/errors";
import { getServerContext } from "@/lib/data/server-context";
import type { TenantContext } from "@/lib/domain/types";
import { parseStepTestCsv } from "./csv";
import { identifyStepTest, type StepTestResult } from "./identify";
import type { DetrendMethod } from "./resample";
import { objectStore, readStoredFile, type ObjectStore } from "./store";

export interface StepTestSummary {
  id: number;
  loopId: number;
  filename: string;
  periodS: number;
  rowCount: number;
  createdAt: string;
  uploadedBy: number | null;
  /** Headline numbers of the result (null when the result is missing). */
  fitPercent: number | null;
  gainPercent: number | null;
  timeConstantS: number | null;
  deadTimeS: number | null;
  proposedPeriodS: number | null;
}

export interface StepTestDetail extends StepTestSummary {
  result: StepTestResult | null;
  /** The loop's current settings, to compare with the proposal. */
  loop: { id: number; tag: string; units: string; mvUnits: string; estimationPeriodS: number; telemetryPeriodS: number; na: number; nb: number; nk: number };
}

/** What a step test's result view shows of its loop (tag, units, PV and MV ranges); for the page that renders it. */
export type StepTestLoopInfo = Pick<StepTestLoop, "tag" | "units" | "mvUnits" | "pvLo" | "pvHi" | "mvLo" | "mvHi">;

export const uploadOptionsSchema = z.object({
  detrend: z.enum(["initial", "mean", "linear"]).default("initial"),
  maxDeadTimeS: z.coerce.number().positive().max(86_400).optional(),
});
export type UploadOptions = z.input<typeof uploadOptionsSchema>;

export const applySchema = z.object({
  reason: text().trim().min(3, "Give a reason (at least 3 characters).").max(2000),
  mocReference: text().trim().max(100).optional().transform((v) => (v ? v : undefined)),
  apply: z.array(z.enum(["estimationPeriod", "modelStructure"])).min(1, "Choose what to apply.").max(2),
});
export type ApplyInput = z.input<typeof applySchema>;

const FILENAME_MAX = 255;

const loadLoop = readStepTestLoop;

type Row = StepTestRow;

function parseResult(raw: unknown): StepTestResult | null {
  const r = typeof raw === "string" ? (JSON.parse(raw) as unknown) : raw;
  return r && typeof r === "object" ? (r as StepTestResult) : null;
}

function summary(row: Row): StepTestSummary {
  const r = parseResult(row.result);
  return {
    id: row.id,
    loopId: row.loopId,
    filename: row.filename,
    periodS: row.periodS,
    rowCount: row.rowCount,
    createdAt: new Date(row.createdAt).toISOString(),
    uploadedBy: row.uploadedBy,
    fitPercent: r?.identification.fitPercent ?? null,
    gainPercent: r?.continuous.gainPercent ?? null,
    timeConstantS: r?.continuous.timeConstantS ?? null,
    deadTimeS: r?.continuous.deadTimeS ?? null,
    proposedPeriodS: r?.proposal?.estimationPeriodS ?? null,
  };
}

/** A file name safe to show and to send back in Content-Disposition. */
export function cleanFilename(name: string): string {
  const base = name.split(/[\\/]/).pop() ?? "";
  const clean = base.replace(/[^\w.\- ()]+/g, "_").trim().slice(0, FILENAME_MAX);
  return clean || "step-test.csv";
}

/**
 * Parse and identify an uploaded CSV, then store the file and record the step test.
 * @throws StepTestFormatError / ValidationError (422), StepTestTooLargeError (413), NotFoundError
 *   (404, loop of another tenant), HttpError 503 when the object store is unavailable.
 */
export async function uploadStepTest(
  ctx: TenantContext,
  loopId: number,
  file: { name: string; bytes: Uint8Array },
  options: UploadOptions = {},
  storeOverride?: ObjectStore,
): Promise<StepTestDetail> {
  const opts = uploadOptionsSchema.parse(options);
  const loop = await loadLoop(ctx, loopId);
  const parsed = parseStepTestCsv(file.bytes, { pvUnits: loop.units, mvUnits: loop.mvUnits, pvLo: loop.pvLo, pvHi: loop.pvHi, mvLo: loop.mvLo, mvHi: loop.mvHi });
  const result = identifyStepTest(
    parsed,
    { telemetryPeriodS: loop.telemetryPeriodS, pvLo: loop.pvLo, pvHi: loop.pvHi, mvLo: loop.mvLo, mvHi: loop.mvHi },
    { detrend: opts.detrend as DetrendMethod, maxDeadTimeS: opts.maxDeadTimeS },
  );
  const filename = cleanFilename(file.name);
  const objectKey = `tenants/${ctx.tenantId}/loops/${loop.id}/step-tests/${randomUUID()}.csv`;
  const store = storeOverride ?? objectStore();
  try {
    await store.put(objectKey, file.bytes, "text/csv; charset=utf-8");
  } catch (e) {
    console.error("[step-tests] object store put failed", e);
    throw new HttpError(503, "The file could not be stored; nothing was saved. Try again later.");
  }
  let row: Row;
  try {
    row = await insertStepTest(ctx, { loopId: loop.id, objectKey, filename, periodS: result.data.periodS, rowCount: result.data.rows, result });
  } catch (e) {
    await store.delete(objectKey).catch(() => {});
    throw e;
  }
  return detail(row, loop);
}

function detail(row: Row, loop: StepTestLoop): StepTestDetail {
  return {
    ...summary(row),
    result: parseResult(row.result),
    loop: { id: loop.id, tag: loop.tag, units: loop.units, mvUnits: loop.mvUnits, estimationPeriodS: loop.estimationPeriodS, telemetryPeriodS: loop.telemetryPeriodS, na: loop.na, nb: loop.nb, nk: loop.nk },
  };
}

/** The loop's step tests, newest first (at most 200). */
export async function listStepTests(ctx: TenantContext, loopId: number): Promise<StepTestSummary[]> {
  const loop = await loadLoop(ctx, loopId);
  const rows = await readStepTestHeadlines(ctx, loop.id);
  const num = (v: unknown): number | null => (v === null || v === undefined || v === "" || v === "null" ? null : Number.isFinite(Number(v)) ? Number(v) : null);
  return rows.map((r) => ({
    id: r.id,
    loopId: r.loopId,
    filename: r.filename,
    periodS: Number(r.periodS),
    rowCount: r.rowCount,
    createdAt: new Date(r.createdAt).toISOString(),
    uploadedBy: r.uploadedBy,
    fitPercent: num(r.fitPercent),
    gainPercent: num(r.gainPercent),
    timeConstantS: num(r.timeConstantS),
    deadTimeS: num(r.deadTimeS),
    proposedPeriodS: num(r.proposedPeriodS),
  }));
}

async function loadStepTest(ctx: TenantContext, loopId: number, stepTestId: number) {
  const loop = await loadLoop(ctx, loopId);
  const row = await readStepTest(ctx, loop.id, stepTestId);
  if (!row) throw new NotFoundError("Step test");
  return { loop, row };
}

export async function getStepTest(ctx: TenantContext, loopId: number, stepTestId: number): Promise<StepTestDetail> {
  const { loop, row } = await loadStepTest(ctx, loopId, stepTestId);
  return detail(row, loop);
}

/** The uploaded file as stored. */
export async function getStepTestData(
  ctx: TenantContext,
  loopId: number,
  stepTestId: number,
  storeOverride?: ObjectStore,
): Promise<{ filename: string; bytes: Buffer }> {
  const { row } = await loadStepTest(ctx, loopId, stepTestId);
  const bytes = await readStoredFile(storeOverride ?? objectStore(), row.objectKey, "Step-test file");
  return { filename: row.filename, bytes };
}

/**
 * Apply the proposal of a step test to its loop: the estimation period and/or the model
 * structure (na, nb, nk). Engineer action; written with its config_changes entry (reason, MOC
 * reference, the step test it came from) in one transaction, then announced so the tracker
 * reloads the loop. Changes Rimguard's own estimation settings only; nothing is sent to a controller.
 * @throws ValidationError (422) bad input; ConflictError (409) when the test has no proposal or
 *   the loop's telemetry period changed since the test was analysed.
 */
export async function applyStepTestProposal(
  ctx: TenantContext,
  loopId: number,
  stepTestId: number,
  input: ApplyInput,
): Promise<{ changed: Record<string, { from: unknown; to: unknown }>; loop: StepTestDetail["loop"] }> {
  const body = applySchema.parse(input);
  const { loop, row } = await loadStepTest(ctx, loopId, stepTestId);
  const result = parseResult(row.result);
  const p = result?.proposal;
  if (!p) throw new ConflictError("This step test has no proposal to apply (no settling mode was identified).");
  if (Math.abs(p.telemetryPeriodS - loop.telemetryPeriodS) > 1e-9 * loop.telemetryPeriodS) {
    throw new ConflictError(
      `The loop's telemetry period is now ${loop.telemetryPeriodS} s; this test was analysed for ${p.telemetryPeriodS} s. Upload the test again to get a current proposal.`,
    );
  }
  const patch: Record<string, number> = {};
  if (body.apply.includes("estimationPeriod")) {
    if (p.estimationPeriodS < loop.telemetryPeriodS) throw new ValidationError("The proposed estimation period is shorter than the telemetry period.");
    if (!(p.estimationPeriodS <= LIMITS.periodS[1])) throw new ValidationError(`The proposed estimation period is longer than ${LIMITS.periodS[1]} s, the longest a loop accepts.`);
    patch.estimationPeriodS = p.estimationPeriodS;
    patch.estimationProposedS = p.estimationPeriodS;
  }
  if (body.apply.includes("modelStructure")) {
    const s = p.modelStructure;
    if (!(s.na >= 1 && s.na <= 10 && s.nb >= 1 && s.nb <= 10 && s.nk >= 1 && s.nk <= 500)) {
      throw new ValidationError(`The proposed structure (na ${s.na}, nb ${s.nb}, nk ${s.nk}) is outside what a loop accepts (na, nb 1-10; nk 1-500).`);
    }
    patch.na = s.na;
    patch.nb = s.nb;
    patch.nk = s.nk;
  }
  const changed = diffOf(loop as unknown as Record<string, unknown>, patch);
  if (Object.keys(changed).length > 0) {
    await patchLoopEstimation(ctx, loop.id, patch, {
      entity: "loop",
      entityId: loop.id,
      diff: { ...changed, stepTest: { from: null, to: `#${row.id} ${row.filename}` } },
      reason: body.reason,
      mocReference: body.mocReference ?? null,
    });
    getServerContext()?.bus.emit("loop:config-changed", loop.id);
  }
  return { changed, loop: detail(row, loop).loop };
}
