/**
 * Site scope of a membership (membership_sites): an admin limits a member to some sites — e.g. a
 * client's staff invited into a contractor's tenant see only their own site — or lifts the limit
 * (an empty list). Logged with a reason; the member's open sessions pick it up at once. SQL in
 * lib/data/reports-settings.ts.
 */
import "server-only";
import { z } from "zod";
import { countTenantSites, membershipForUpdate, replaceMembershipSites } from "@/lib/data/reports";
import { NotFoundError, ValidationError } from "@/lib/domain/errors";
import { notifyUserChanged } from "@/lib/data/server-context";
import type { TenantContext } from "@/lib/domain/types";
import { inConfigTransaction, logConfigChange } from "./config-log";

export const membershipSitesSchema = z
  .object({ siteIds: z.array(z.coerce.number().int().positive()).max(500), reason: z.string().trim().min(3, "Give a reason.").max(500) })
  .strict();

export async function setMembershipSites(ctx: TenantContext, membershipId: number, input: z.infer<typeof membershipSitesSchema>): Promise<{ membershipId: number; siteIds: number[] | null }> {
  return inConfigTransaction(async (transaction) => {
    const m = await membershipForUpdate(ctx.tenantId, membershipId, transaction);
    if (!m) throw new NotFoundError("Membership");
    if (m.userId === ctx.userId && input.siteIds.length) throw new ValidationError("You cannot limit your own membership; ask another admin.");
    const ids = [...new Set(input.siteIds)];
    if (ids.length && (await countTenantSites(ctx.tenantId, ids, transaction)) !== ids.length) throw new NotFoundError("Site");
    const before = await replaceMembershipSites(membershipId, ids, transaction);
    await logConfigChange(ctx, { entity: "membership", entityId: membershipId, diff: { siteIds: { from: before, to: ids } }, reason: input.reason }, transaction);
    notifyUserChanged(m.userId);
    return { membershipId, siteIds: ids.length ? ids : null };
  });
}
