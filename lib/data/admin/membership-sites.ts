/**
 * Site scope of a membership (membership_sites): an admin limits a member to some sites — e.g. a
 * client's staff invited into a contractor's tenant see only their own site — or lifts the limit
 * (an empty list). Logged with a reason; the member's open sessions pick it up at once.
 */
import "server-only";
import { QueryTypes } from "sequelize";
import { z } from "zod";
import { getSequelize } from "@/lib/data/db/sequelize";
import { NotFoundError, ValidationError } from "@/lib/domain/errors";
import { notifyUserChanged } from "@/lib/data/server-context";
import type { TenantContext } from "@/lib/domain/types";
import { logConfigChange } from "./config-log";

export const membershipSitesSchema = z
  .object({ siteIds: z.array(z.coerce.number().int().positive()).max(500), reason: z.string().trim().min(3, "Give a reason.").max(500) })
  .strict();

export async function setMembershipSites(ctx: TenantContext, membershipId: number, input: z.infer<typeof membershipSitesSchema>): Promise<{ membershipId: number; siteIds: number[] | null }> {
  const db = getSequelize();
  return db.transaction(async (transaction) => {
    const [m] = await db.query<{ id: number; user_id: number }>("SELECT id, user_id FROM memberships WHERE id = ? AND tenant_id = ? FOR UPDATE", {
      replacements: [membershipId, ctx.tenantId],
      type: QueryTypes.SELECT,
      transaction,
    });
    if (!m) throw new NotFoundError("Membership");
    if (Number(m.user_id) === ctx.userId && input.siteIds.length) throw new ValidationError("You cannot limit your own membership; ask another admin.");
    const ids = [...new Set(input.siteIds)];
    if (ids.length) {
      const found = await db.query<{ id: number }>("SELECT id FROM sites WHERE tenant_id = ? AND id IN (?)", { replacements: [ctx.tenantId, ids], type: QueryTypes.SELECT, transaction });
      if (found.length !== ids.length) throw new NotFoundError("Site");
    }
    const before = await db.query<{ site_id: number }>("SELECT site_id FROM membership_sites WHERE membership_id = ?", { replacements: [membershipId], type: QueryTypes.SELECT, transaction });
    await db.query("DELETE FROM membership_sites WHERE membership_id = ?", { replacements: [membershipId], transaction });
    if (ids.length) await db.query(`INSERT INTO membership_sites (membership_id, site_id) VALUES ${ids.map(() => "(?,?)").join(",")}`, { replacements: ids.flatMap((s) => [membershipId, s]), transaction });
    await logConfigChange(ctx, { entity: "membership", entityId: membershipId, diff: { siteIds: { from: before.map((b) => Number(b.site_id)), to: ids } }, reason: input.reason }, transaction);
    notifyUserChanged(Number(m.user_id));
    return { membershipId, siteIds: ids.length ? ids : null };
  });
}
