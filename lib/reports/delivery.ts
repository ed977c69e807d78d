/**
 * Report delivery by e-mail: a user subscribes to a report per shift (the handover of a site, or
 * of one area of it) or weekly (worst loops, fleet health; for every site, one site or one area).
 * The runs, recipients and their SQL are in lib/data/reports-delivery.ts; this module holds the
 * rules of a subscription.
 */
import type { Sequelize } from "sequelize";
import { z } from "zod";
import { deleteSubscription, insertSubscription, selectSubscriptions } from "@/lib/data/reports-delivery";
import { siteAndAreaExist } from "@/lib/data/reports-log";
import { NotFoundError } from "@/lib/domain/errors";

export type ReportKind = "handover" | "worst-loops" | "fleet-health";

export const subscriptionInputSchema = z
  .object({
    report: z.enum(["handover", "worst-loops", "fleet-health"]),
    cadence: z.enum(["shift", "weekly"]),
    siteId: z.coerce.number().int().positive().optional(),
    areaId: z.coerce.number().int().positive().optional(),
  })
  .strict()
  .refine((s) => (s.report === "handover") === (s.cadence === "shift"), { message: "the handover goes out per shift; the other reports weekly", path: ["cadence"] })
  .refine((s) => s.report !== "handover" || s.siteId !== undefined, { message: "a handover subscription names its site", path: ["siteId"] })
  .refine((s) => s.areaId === undefined || s.siteId !== undefined, { message: "an area subscription names the area's site", path: ["siteId"] });

export interface SubscriptionDto {
  id: number;
  report: ReportKind;
  cadence: "shift" | "weekly";
  siteId: number | null;
  siteName: string | null;
  /** null: the whole site (or every site). */
  areaId: number | null;
  areaName: string | null;
}

export async function listMySubscriptions(ctx: { tenantId: number; userId: number }, db?: Sequelize): Promise<SubscriptionDto[]> {
  return selectSubscriptions(ctx.tenantId, ctx.userId, db);
}

export async function subscribe(
  ctx: { tenantId: number; userId: number; siteIds?: number[] | null },
  input: z.infer<typeof subscriptionInputSchema>,
  db?: Sequelize,
): Promise<SubscriptionDto> {
  if (input.siteId !== undefined) {
    const found = await siteAndAreaExist(ctx.tenantId, input.siteId, input.areaId, db);
    if (!found.site || (ctx.siteIds && !ctx.siteIds.includes(input.siteId))) throw new NotFoundError("Site");
    if (!found.area) throw new NotFoundError("Area");
  }
  const id = await insertSubscription(
    { tenantId: ctx.tenantId, userId: ctx.userId, report: input.report, cadence: input.cadence, siteId: input.siteId ?? null, areaId: input.areaId ?? null },
    db,
  );
  const mine = (await listMySubscriptions(ctx, db)).find((s) => s.id === id);
  if (!mine) throw new Error("The subscription just written could not be read back.");
  return mine;
}

/** Remove one of the caller's own subscriptions (another user's or tenant's is a 404). */
export async function unsubscribe(ctx: { tenantId: number; userId: number }, id: number, db?: Sequelize): Promise<void> {
  if (!(await deleteSubscription(ctx.tenantId, ctx.userId, id, db))) throw new NotFoundError("Subscription");
}
