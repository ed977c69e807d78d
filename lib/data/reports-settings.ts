/**
 * A site's shift settings (sites.time_zone, sites.shift_starts) and membership site scopes, read
 * and written inside the caller's transaction. Node only; plain rows out.
 */
import { QueryTypes, type Transaction } from "sequelize";
import { getSequelize } from "@/lib/data/db/sequelize";

export interface SiteShiftSettingsRow {
  id: number;
  name: string;
  timeZone: string;
  shiftStarts: string | null;
}

/** A site of the tenant (locked for update inside a transaction), or undefined. */
export async function siteShiftSettings(tenantId: number, siteId: number, transaction?: Transaction): Promise<SiteShiftSettingsRow | undefined> {
  const [r] = await getSequelize().query<{ id: number; name: string; time_zone: string; shift_starts: string | null }>(
    `SELECT id, name, time_zone, shift_starts FROM sites WHERE id = ? AND tenant_id = ?${transaction ? " FOR UPDATE" : ""}`,
    { replacements: [siteId, tenantId], type: QueryTypes.SELECT, transaction },
  );
  return r && { id: Number(r.id), name: r.name, timeZone: r.time_zone, shiftStarts: r.shift_starts };
}

export async function updateSiteShiftSettings(tenantId: number, siteId: number, timeZone: string, shiftStarts: string, transaction: Transaction): Promise<void> {
  await getSequelize().query("UPDATE sites SET time_zone = ?, shift_starts = ?, updated_at = UTC_TIMESTAMP(3) WHERE id = ? AND tenant_id = ?", {
    replacements: [timeZone, shiftStarts, siteId, tenantId],
    transaction,
  });
}

/** Every site's shift settings of a tenant, by name. */
export async function tenantShiftSettings(tenantId: number): Promise<SiteShiftSettingsRow[]> {
  const rows = await getSequelize().query<{ id: number; name: string; time_zone: string; shift_starts: string | null }>(
    "SELECT id, name, time_zone, shift_starts FROM sites WHERE tenant_id = ? ORDER BY name",
    { replacements: [tenantId], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({ id: Number(r.id), name: r.name, timeZone: r.time_zone, shiftStarts: r.shift_starts }));
}

/** Site scope of every membership of a tenant that has one (membership id -> site ids). */
export async function membershipSiteScopes(tenantId: number): Promise<Map<number, number[]>> {
  const rows = await getSequelize().query<{ membership_id: number; site_id: number }>(
    "SELECT ms.membership_id, ms.site_id FROM membership_sites ms JOIN memberships m ON m.id = ms.membership_id WHERE m.tenant_id = ? ORDER BY ms.site_id",
    { replacements: [tenantId], type: QueryTypes.SELECT },
  );
  const out = new Map<number, number[]>();
  for (const r of rows) (out.get(Number(r.membership_id)) ?? out.set(Number(r.membership_id), []).get(Number(r.membership_id))!).push(Number(r.site_id));
  return out;
}

/** A membership of the tenant (locked for update) with its user, or undefined. */
export async function membershipForUpdate(tenantId: number, membershipId: number, transaction: Transaction): Promise<{ id: number; userId: number } | undefined> {
  const [m] = await getSequelize().query<{ id: number; user_id: number }>("SELECT id, user_id FROM memberships WHERE id = ? AND tenant_id = ? FOR UPDATE", {
    replacements: [membershipId, tenantId],
    type: QueryTypes.SELECT,
    transaction,
  });
  return m && { id: Number(m.id), userId: Number(m.user_id) };
}

/** How many of the given site ids are sites of the tenant. */
export async function countTenantSites(tenantId: number, siteIds: number[], transaction: Transaction): Promise<number> {
  if (!siteIds.length) return 0;
  const found = await getSequelize().query<{ id: number }>("SELECT id FROM sites WHERE tenant_id = ? AND id IN (?)", { replacements: [tenantId, siteIds], type: QueryTypes.SELECT, transaction });
  return found.length;
}

/** Replace a membership's site scope; returns the site ids it had before. */
export async function replaceMembershipSites(membershipId: number, siteIds: number[], transaction: Transaction): Promise<number[]> {
  const db = getSequelize();
  const before = await db.query<{ site_id: number }>("SELECT site_id FROM membership_sites WHERE membership_id = ?", { replacements: [membershipId], type: QueryTypes.SELECT, transaction });
  await db.query("DELETE FROM membership_sites WHERE membership_id = ?", { replacements: [membershipId], transaction });
  if (siteIds.length) {
    await db.query(`INSERT INTO membership_sites (membership_id, site_id) VALUES ${siteIds.map(() => "(?,?)").join(",")}`, { replacements: siteIds.flatMap((s) => [membershipId, s]), transaction });
  }
  return before.map((b) => Number(b.site_id));
}
