/**
 * Creating and editing loops (engineer). Every change is written together with its entry in
 * config_changes in one transaction, then announced on the bus so the tracker host reloads the
 * loop. Rimguard stores the controller's tuning as documentation of the live controller; it
 * never writes to a controller.
 */
import "server-only";
import { UniqueConstraintError } from "sequelize";
import { z } from "zod";
import { ConflictError, NotFoundError, ValidationError } from "@/lib/domain/errors";
import { getDb } from "@/lib/data/db/sequelize";
import { getServerContext } from "@/lib/data/server-context";
import { slugify } from "@/lib/domain/slug";
import { findOwned } from "@/lib/data/tenancy";
import type { TenantContext } from "@/lib/domain/types";
import { diffOf, logConfigChange } from "./config-log";
import type { CreateLoopInput, LoopFields, UpdateLoopInput } from "@/lib/admin/loop-schema";
import { loopConfigSchema, loopFieldsSchema } from "@/lib/admin/loop-schema";

const FIELDS = Object.keys(loopFieldsSchema.shape) as (keyof LoopFields)[];

export type LoopConfigDto = LoopFields & { id: number; slug: string; estimationProposedS: number | null };

function toDto(row: Record<string, unknown>): LoopConfigDto {
  const out: Record<string, unknown> = { id: row.id, slug: row.slug, estimationProposedS: row.estimationProposedS ?? null };
  for (const k of FIELDS) out[k] = row[k] ?? null;
  out.tdValue = (row.tdValue as number | null) ?? 0;
  out.enabled = Boolean(row.enabled);
  return out as LoopConfigDto;
}

async function assertSiteAndArea(ctx: TenantContext, siteId: number, areaId: number | null | undefined): Promise<void> {
  const { Site, Area } = getDb().models;
  const site = await findOwned(Site, ctx, siteId);
  if (!site) throw new ValidationError("siteId: no such site in this tenant.");
  if (areaId != null) {
    const area = await findOwned(Area, ctx, areaId);
    if (!area || area.siteId !== siteId) throw new ValidationError("areaId: no such operator area at this site.");
  }
}

export async function getLoopConfig(ctx: TenantContext, loopId: number): Promise<LoopConfigDto | null> {
  const { Loop } = getDb().models;
  const row = await findOwned(Loop, ctx, loopId);
  return row ? toDto(row.get({ plain: true }) as Record<string, unknown>) : null;
}

/** Fields checked together (checkRanges in loop-schema.ts): a patch to one re-checks the other. */
const LINKED: (keyof LoopFields)[][] = [
  ["pvLo", "pvHi"],
  ["mvLo", "mvHi"],
  ["telemetryPeriodS", "estimationPeriodS"],
  ["gainKind", "gainValue"],
  ["tiValue", "tiUnits"],
  ["tdValue", "tdUnits"],
];

/**
 * A patch alone cannot be checked across fields (a gain without its kind, a period without the
 * other): the stored loop with the patch applied must pass the whole schema. Only issues on the
 * patched fields and the fields linked to them count, so an older row outside today's ranges can
 * still be edited elsewhere (and is checked in full the day that field is edited).
 */
function checkMergedConfig(merged: Record<string, unknown>, patch: Record<string, unknown>): void {
  const candidate: Record<string, unknown> = {};
  for (const k of FIELDS) candidate[k] = merged[k] ?? null;
  candidate.tdValue = (merged.tdValue as number | null) ?? 0;
  candidate.enabled = Boolean(merged.enabled);
  const touched = new Set(Object.keys(patch));
  for (const group of LINKED) if (group.some((k) => touched.has(k))) for (const k of group) touched.add(k);
  const res = loopConfigSchema.safeParse(candidate);
  const issues = res.success ? [] : res.error.issues.filter((i) => touched.has(String(i.path[0])));
  if (issues.length) throw new z.ZodError(issues);
}

function announce(loopId: number): void {
  getServerContext()?.bus.emit("loop:config-changed", loopId);
}

export async function createLoop(ctx: TenantContext, input: CreateLoopInput): Promise<LoopConfigDto> {
  const { Loop } = getDb().models;
  const { sequelize } = getDb();
  await assertSiteAndArea(ctx, input.siteId, input.areaId);
  const { reason, mocReference, ...fields } = input;
  const slug = slugify(fields.tag);
  if (!slug) throw new ValidationError("tag: the tag must contain a letter or a digit.");
  try {
    const row = await sequelize.transaction(async (transaction) => {
      const created = await Loop.create(
        { ...fields, tenantId: ctx.tenantId, slug, tdValue: fields.tdValue, derivativeAlpha: null, mvLimitLo: null, mvLimitHi: null, cascadeMasterLoopId: null, estimationProposedS: null },
        { transaction },
      );
      await logConfigChange(ctx, { entity: "loop", entityId: created.id, diff: diffOf({}, fields as Record<string, unknown>), reason, mocReference }, transaction);
      return created;
    });
    announce(row.id);
    return toDto(row.get({ plain: true }) as Record<string, unknown>);
  } catch (e) {
    if (e instanceof UniqueConstraintError) throw new ConflictError(`A loop with the tag "${fields.tag}" already exists at this site.`);
    throw e;
  }
}

export async function updateLoop(ctx: TenantContext, loopId: number, input: UpdateLoopInput): Promise<LoopConfigDto> {
  const { Loop } = getDb().models;
  const { sequelize } = getDb();
  const row = await findOwned(Loop, ctx, loopId);
  if (!row) throw new NotFoundError("Loop");
  const { reason, mocReference, ...patch } = input;
  const before = row.get({ plain: true }) as Record<string, unknown>;
  const merged = { ...before, ...patch } as Record<string, number | null>;
  checkMergedConfig(merged, patch);
  if (patch.siteId !== undefined || patch.areaId !== undefined) await assertSiteAndArea(ctx, Number(merged.siteId), merged.areaId as number | null);
  const diff = diffOf(before, patch as Record<string, unknown>);
  if (Object.keys(diff).length === 0) return toDto(before);
  const update: Record<string, unknown> = { ...patch };
  if (patch.tag !== undefined) update.slug = slugify(patch.tag);
  try {
    await sequelize.transaction(async (transaction) => {
      await row.update(update, { transaction });
      await logConfigChange(ctx, { entity: "loop", entityId: loopId, diff, reason, mocReference }, transaction);
    });
  } catch (e) {
    if (e instanceof UniqueConstraintError) throw new ConflictError(`A loop with that tag already exists at this site.`);
    throw e;
  }
  announce(loopId);
  return toDto(row.get({ plain: true }) as Record<string, unknown>);
}
