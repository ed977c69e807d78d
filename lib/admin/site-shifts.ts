/**
 * A site's shifts: the local start times (e.g. 06:00, 14:00, 22:00) in the site's IANA time zone,
 * which the handover, its e-mail and the confirmations follow (lib/reports/shifts.ts). Admins
 * change them with a reason; the change and its change-log row go in one transaction.
 */
import { z } from "zod";
import { siteShiftSettings, tenantShiftSettings, updateSiteShiftSettings } from "@/lib/data/reports";
import { NotFoundError } from "@/lib/domain/errors";
import type { TenantContext } from "@/lib/domain/types";
import { parseShiftStarts, formatMinutes } from "@/lib/reports/shifts";
import { siteVisible } from "@/lib/tenancy";
import { text } from "@/lib/text-input";
import { inConfigTransaction, logConfigChange } from "./config-log";
import { ianaTimeZone } from "./sites";

/** A shift shorter than this is a typing slip, not a shift (our rule). */
export const MIN_SHIFT_MINUTES = 60;
export const MAX_SHIFTS = 6;

const hhmm = z.string().trim().regex(/^([01]\d|2[0-3]):[0-5]\d$/, "a time of day HH:MM (00:00-23:59)");

export const siteShiftsSchema = z
  .object({
    timeZone: ianaTimeZone(),
    shiftStarts: z.array(hhmm).min(1, "Give at least one shift start.").max(MAX_SHIFTS, `At most ${MAX_SHIFTS} shifts a day.`),
    reason: text().trim().min(3, "Give a reason.").max(500),
  })
  .strict()
  .superRefine((v, c) => {
    const mins = v.shiftStarts.map((t) => Number(t.slice(0, 2)) * 60 + Number(t.slice(3, 5)));
    for (let i = 1; i < mins.length; i++) {
      if (mins[i]! === mins[i - 1]!) c.addIssue({ code: "custom", path: ["shiftStarts", i], message: `${v.shiftStarts[i]} is given twice: shift starts must be different times.` });
      else if (mins[i]! < mins[i - 1]!) c.addIssue({ code: "custom", path: ["shiftStarts", i], message: "List the shift starts in the order of the day (earliest first)." });
    }
    if (mins.length > 1 && new Set(mins).size === mins.length) {
      for (let i = 0; i < mins.length; i++) {
        const len = ((mins[(i + 1) % mins.length]! - mins[i]! + 1440) % 1440) || 1440;
        if (len < MIN_SHIFT_MINUTES) c.addIssue({ code: "custom", path: ["shiftStarts", i], message: `The shift from ${v.shiftStarts[i]} would last ${len} min; a shift lasts at least ${MIN_SHIFT_MINUTES} min.` });
      }
    }
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
