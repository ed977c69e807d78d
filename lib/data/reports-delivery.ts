/**
 * Report delivery's SQL: subscriptions, recipients and scheduled runs. A run is claimed by
 * inserting its row (unique on kind, scope, period) before anything is built or sent: a second
 * process, a second tick or a restart finds the row and does not send again. A run left `claimed`
 * by a process that died is taken over after STALE_CLAIM_MS, inside a transaction that re-checks
 * it. Recipients are always current members of the tenant (disabled users and removed memberships
 * get nothing) whose site scope includes the report's site. Node only; plain typed objects out.
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { getSequelize } from "@/lib/data/db/sequelize";
import type { ReportKind, SubscriptionDto } from "@/lib/reports/delivery";

export const STALE_CLAIM_MS = 10 * 60_000;

export interface RunKey {
  tenantId: number;
  kind: ReportKind;
  scopeKey: string;
  periodStart: number;
  periodEnd: number;
}

/** Claim a run; true when this caller owns it now (it must then finish it). */
export async function claimRun(key: RunKey, now: number, db: Sequelize = getSequelize()): Promise<boolean> {
  try {
    await db.query(
      "INSERT INTO report_runs (tenant_id, kind, scope_key, period_start, period_end, status, claimed_at) VALUES (?,?,?,?,?, 'claimed', ?)",
      { replacements: [key.tenantId, key.kind, key.scopeKey, new Date(key.periodStart), new Date(key.periodEnd), new Date(now)], type: QueryTypes.INSERT },
    );
    return true;
  } catch (err) {
    if ((err as { name?: string }).name !== "SequelizeUniqueConstraintError") throw err;
  }
  return db.transaction(async (transaction) => {
    const [row] = await db.query<{ id: number; status: string; claimed_at: Date }>(
      "SELECT id, status, claimed_at FROM report_runs WHERE kind = ? AND scope_key = ? AND period_start = ? FOR UPDATE",
      { replacements: [key.kind, key.scopeKey, new Date(key.periodStart)], type: QueryTypes.SELECT, transaction },
    );
    if (!row || row.status !== "claimed" || now - new Date(row.claimed_at).getTime() < STALE_CLAIM_MS) return false;
    await db.query("UPDATE report_runs SET claimed_at = ? WHERE id = ?", { replacements: [new Date(now), row.id], transaction });
    return true;
  });
}

export async function finishRun(key: RunKey, status: "sent" | "failed" | "no-recipients", recipients: number, error: string | null, now: number, db: Sequelize = getSequelize()): Promise<void> {
  await db.query("UPDATE report_runs SET status = ?, recipients = ?, error = ?, finished_at = ? WHERE kind = ? AND scope_key = ? AND period_start = ?", {
    replacements: [status, recipients, error, new Date(now), key.kind, key.scopeKey, new Date(key.periodStart)],
  });
}

export interface Recipient {
  subscriptionId: number;
  userId: number;
  email: string;
  name: string;
  siteId: number | null;
  /** The area the subscription is for (null: the whole site, or every site). */
  areaId: number | null;
  /** The member's site scope; null = every site. */
  siteIds: number[] | null;
}

const RECIPIENT_SQL = `SELECT rs.id AS sid, u.id AS uid, u.email, u.name, rs.site_id, rs.area_id,
       (SELECT GROUP_CONCAT(ms.site_id) FROM membership_sites ms WHERE ms.membership_id = m.id) AS scope
  FROM report_subscriptions rs
  JOIN users u ON u.id = rs.user_id AND u.disabled = 0
  JOIN memberships m ON m.user_id = rs.user_id AND m.tenant_id = rs.tenant_id`;

type RawRecipient = { sid: number; uid: number; email: string; name: string; site_id: number | null; area_id: number | null; scope: string | null };

function mapRecipient(r: RawRecipient): Recipient {
  return {
    subscriptionId: Number(r.sid),
    userId: Number(r.uid),
    email: r.email,
    name: r.name,
    siteId: r.site_id == null ? null : Number(r.site_id),
    areaId: r.area_id == null ? null : Number(r.area_id),
    siteIds: r.scope ? r.scope.split(",").map(Number) : null,
  };
}

/**
 * Members of the tenant subscribed to a shift handover, within their site scope: of the whole
 * site (`areaId` null) or of one of its areas (that area's subscribers only).
 */
export async function handoverRecipients(tenantId: number, siteId: number, areaId: number | null = null, db: Sequelize = getSequelize()): Promise<Recipient[]> {
  const rows = await db.query<RawRecipient>(`${RECIPIENT_SQL} WHERE rs.tenant_id = ? AND rs.report = 'handover' AND rs.site_id = ? AND rs.area_id <=> ?`, {
    replacements: [tenantId, siteId, areaId],
    type: QueryTypes.SELECT,
  });
  return rows.map(mapRecipient).filter((r) => !r.siteIds || r.siteIds.includes(siteId));
}

/** The areas of a site that have handover subscribers. */
export async function handoverAreas(tenantId: number, siteId: number, db: Sequelize = getSequelize()): Promise<number[]> {
  const rows = await db.query<{ area_id: number }>(
    "SELECT DISTINCT area_id FROM report_subscriptions WHERE tenant_id = ? AND report = 'handover' AND site_id = ? AND area_id IS NOT NULL ORDER BY area_id",
    { replacements: [tenantId, siteId], type: QueryTypes.SELECT },
  );
  return rows.map((r) => Number(r.area_id));
}

/** Every weekly subscription of current members, with the tenant's name. */
export async function weeklySubscriptions(db: Sequelize = getSequelize()): Promise<(Recipient & { tenantId: number; tenantName: string; report: ReportKind })[]> {
  const rows = await db.query<RawRecipient & { tenant_id: number; tname: string; report: ReportKind }>(
    `${RECIPIENT_SQL.replace("SELECT rs.id AS sid", "SELECT rs.tenant_id, t.name AS tname, rs.report, rs.id AS sid")} JOIN tenants t ON t.id = rs.tenant_id WHERE rs.cadence = 'weekly'`,
    { type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({ ...mapRecipient(r), tenantId: Number(r.tenant_id), tenantName: r.tname, report: r.report }));
}

export interface SiteRow {
  id: number;
  tenantId: number;
  tenantName: string;
  name: string;
  timeZone: string;
  shiftStarts: string | null;
}

export async function allSites(db: Sequelize = getSequelize()): Promise<SiteRow[]> {
  const rows = await db.query<{ id: number; tenant_id: number; tname: string; name: string; time_zone: string; shift_starts: string | null }>(
    "SELECT s.id, s.tenant_id, t.name AS tname, s.name, s.time_zone, s.shift_starts FROM sites s JOIN tenants t ON t.id = s.tenant_id",
    { type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({ id: Number(r.id), tenantId: Number(r.tenant_id), tenantName: r.tname, name: r.name, timeZone: r.time_zone, shiftStarts: r.shift_starts }));
}

// ---------------------------------------------------------------- a user's own subscriptions

export async function selectSubscriptions(tenantId: number, userId: number, db: Sequelize = getSequelize()): Promise<SubscriptionDto[]> {
  const rows = await db.query<{ id: number; report: ReportKind; cadence: "shift" | "weekly"; site_id: number | null; name: string | null; area_id: number | null; area: string | null }>(
    `SELECT rs.id, rs.report, rs.cadence, rs.site_id, s.name, rs.area_id, a.name AS area
       FROM report_subscriptions rs LEFT JOIN sites s ON s.id = rs.site_id LEFT JOIN areas a ON a.id = rs.area_id
      WHERE rs.tenant_id = ? AND rs.user_id = ? ORDER BY rs.id`,
    { replacements: [tenantId, userId], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({
    id: Number(r.id),
    report: r.report,
    cadence: r.cadence,
    siteId: r.site_id == null ? null : Number(r.site_id),
    siteName: r.name,
    areaId: r.area_id == null ? null : Number(r.area_id),
    areaName: r.area,
  }));
}

export async function insertSubscription(
  s: { tenantId: number; userId: number; report: ReportKind; cadence: "shift" | "weekly"; siteId: number | null; areaId: number | null },
  db: Sequelize = getSequelize(),
): Promise<number> {
  const [id] = (await db.query("INSERT INTO report_subscriptions (tenant_id, user_id, report, cadence, site_id, area_id) VALUES (?,?,?,?,?,?)", {
    replacements: [s.tenantId, s.userId, s.report, s.cadence, s.siteId, s.areaId],
    type: QueryTypes.INSERT,
  })) as unknown as [number];
  return Number(id);
}

/** Delete one of a user's subscriptions; the number of rows removed (0 or 1). */
export async function deleteSubscription(tenantId: number, userId: number, id: number, db: Sequelize = getSequelize()): Promise<number> {
  const [, meta] = (await db.query("DELETE FROM report_subscriptions WHERE id = ? AND tenant_id = ? AND user_id = ?", { replacements: [id, tenantId, userId] })) as unknown as [
    unknown,
    { affectedRows?: number } | number,
  ];
  return typeof meta === "number" ? meta : (meta?.affectedRows ?? 0);
}
