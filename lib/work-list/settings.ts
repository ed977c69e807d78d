/**
 * The work list's engineering settings, per tenant: today the level of the sluggish-tuning finding
 * (the tracked model's set-point response slower than this multiple of the loop's baseline time
 * constant, lib/assessment/model-check.ts). Engineers read them, admins set them; each change is
 * logged with its reason and reaches the live assessment at once (bus `work-list:settings-changed`).
 * They never touch the operator alarms or their policies.
 */
import { z } from "zod";
import { SLUGGISH_MULTIPLE } from "@/lib/assessment/model-check";
import { getServerContext } from "@/lib/data/server-context";
import { selectWorkListSettings, upsertWorkListSettings } from "@/lib/data/work-list-settings";
import { ForbiddenError } from "@/lib/domain/errors";
import { roleAtLeast, type TenantContext } from "@/lib/domain/types";
import { text } from "@/lib/text-input";

export interface WorkListSettingsDto {
  /** × the loop's baseline time constant. */
  sluggishMultiple: number;
  /** True when the tenant has not set it (the default applies). */
  isDefault: boolean;
  updatedAt: string | null;
  updatedBy: string | null;
}

export const workListSettingsSchema = z
  .object({
    sluggishMultiple: z.number().gt(1, "must be above 1 (a response as fast as the baseline is not sluggish)").max(100),
    reason: text().trim().min(1, "a reason for the change is required").max(2000),
  })
  .strict();

export async function readWorkListSettings(ctx: TenantContext): Promise<WorkListSettingsDto> {
  const row = await selectWorkListSettings(ctx.tenantId);
  return {
    sluggishMultiple: row?.sluggishMultiple ?? SLUGGISH_MULTIPLE,
    isDefault: row === null,
    updatedAt: row?.updatedAt ? new Date(row.updatedAt).toISOString() : null,
    updatedBy: row?.updatedBy ?? null,
  };
}

export async function writeWorkListSettings(ctx: TenantContext, input: z.infer<typeof workListSettingsSchema>): Promise<WorkListSettingsDto> {
  if (!roleAtLeast(ctx.role, "admin")) throw new ForbiddenError(`Setting the work list's levels needs the admin role; you are ${ctx.role}.`);
  const before = await readWorkListSettings(ctx);
  await upsertWorkListSettings(ctx.tenantId, ctx.userId, { sluggishMultiple: input.sluggishMultiple }, before, input.reason);
  getServerContext()?.bus.emit("work-list:settings-changed", ctx.tenantId);
  return readWorkListSettings(ctx);
}
