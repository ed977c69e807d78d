/**
 * A site's shifts: the local start times (e.g. 06:00, 14:00, 22:00) in the site's IANA time zone,
 * which the handover, its e-mail and the confirmations follow (lib/reports/shifts.ts). Admins
 * change them with a reason; the change and its change-log row go in one transaction.
 */
import { z } from "zod";
import { siteShiftSettings, tenantShiftSettings, updateSiteShiftSettings } from "@/lib/data/reports";
import { NotFoundError } from "@/lib/domain/errors";
import type { TenantContext } from "@/lib/domain/types";
import { formatMinutes, parseShiftStarts, shiftStartProblems } from "@/lib/reports/shifts";
import { siteVisible } from "@/lib/data/tenancy";
import { text } from "@/lib/text-input";
import { inConfigTransaction, logConfigChange } from "@/lib/data/admin/config-log";
import { ianaTimeZone } from "@/lib/data/admin/sites";

const hhmm = z.string().trim().max(5);

export const siteShiftsSchema = z
  .object({
    timeZone: ianaTimeZone(),
    shiftStarts: z.array(hhmm).max(24),
    reason: text().trim().min(3, "Give a reason.").max(500),
  })
  .strict()
  .superRefine((v, c) => {
    for (const p of shiftStartProblems(v.shiftStarts)) c.addIssue({ code: "custom", path: ["shiftStarts", p.index], message: p.message });
  });

export interface SiteShiftsDto {
  siteId: number;
  siteName: string;
  timeZone: string;
  /** "HH:MM", earliest first. */
  shiftStarts: string[];
}

const dto = (r: { id: number; name: string; timeZone: string; shiftStarts: string | null }): SiteShiftsDto => ({
  siteId: r.id,
  siteName: r.name,
  timeZone: r.timeZone,
  shiftStarts: parseShiftStarts(r.shiftStarts).map(formatMinutes),
});

export async function listSiteShifts(ctx: TenantContext): Promise<SiteShiftsDto[]> {
  return (await tenantShiftSettings(ctx.tenantId)).filter((s) => siteVisible(ctx, s.id)).map(dto);
}

export async function setSiteShifts(ctx: TenantContext, siteId: number, input: z.infer<typeof siteShiftsSchema>): Promise<SiteShiftsDto> {
  if (!siteVisible(ctx, siteId)) throw new NotFoundError("Site");
  const spec = input.shiftStarts.join(",");
  return inConfigTransaction(async (transaction) => {
    const before = await siteShiftSettings(ctx.tenantId, siteId, transaction);
    if (!before) throw new NotFoundError("Site");
    const old = dto(before);
    await updateSiteShiftSettings(ctx.tenantId, siteId, input.timeZone, spec, transaction);
    const diff: Record<string, { from: unknown; to: unknown }> = {};
    if (old.timeZone !== input.timeZone) diff.timeZone = { from: old.timeZone, to: input.timeZone };
    if (old.shiftStarts.join(",") !== spec) diff.shiftStarts = { from: old.shiftStarts.join(","), to: spec };
    await logConfigChange(ctx, { entity: "site", entityId: siteId, diff, reason: input.reason }, transaction);
    return { siteId, siteName: before.name, timeZone: input.timeZone, shiftStarts: [...input.shiftStarts] };
  });
}
