/**
 * Report delivery by e-mail: subscriptions (a user asks for a report per shift or weekly) and
 * scheduled runs. A run is claimed by inserting its row (unique on kind, scope, period) before
 * anything is built or sent: a second process, a second tick or a restart finds the row and does
 * not send again. A run left `claimed` by a process that died is taken over after STALE_CLAIM_MS,
 * inside a transaction that re-checks it. Recipients are always current members of the tenant
 * (disabled users and removed memberships get nothing) whose site scope includes the report's site.
 * Every SQL statement of delivery is here; plain typed objects out.
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { z } from "zod";
import { getSequelize } from "@/lib/db/sequelize";
import { NotFoundError } from "@/lib/domain/errors";

export const STALE_CLAIM_MS = 10 * 60_000;
export type ReportKind = "handover" | "worst-loops" | "fleet-health";

export const subscriptionInputSchema = z
  .object({
    report: z.enum(["handover", "worst-loops", "fleet-health"]),
    cadence: z.enum(["shift", "weekly"]),
    siteId: z.coerce.number().int().positive().optional(),
  })
  .strict()
  .refine((s) => (s.report === "handover") === (s.cadence === "shift"), { message: "the handover goes out per shift; the other reports weekly", path: ["cadence"] })
  .refine((s) => s.report !== "handover" || s.siteId !== undefined, { message: "a handover subscription names its site", path: ["siteId"] });

export interface SubscriptionDto {
  id: number;
  report: ReportKind;
  cadence: "shift" | "weekly";
  siteId: number | null;
  siteName: string | null;
}

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
  /** The member's site scope; null = every site. */
  siteIds: number[] | null;
}

const RECIPIENT_SQL = `SELECT rs.id AS sid, u.id AS uid, u.email, u.name, rs.site_id,
       (SELECT GROUP_CONCAT(ms.site_id) FROM membership_sites ms WHERE ms.membership_id = m.id) AS scope
  FROM report_subscriptions rs
  JOIN users u ON u.id = rs.user_id AND u.disabled = 0
  JOIN memberships m ON m.user_id = rs.user_id AND m.tenant_id = rs.tenant_id`;

function mapRecipient(r: { sid: number; uid: number; email: string; name: string; site_id: number | null; scope: string | null }): Recipient {
  return {
    subscriptionId: Number(r.sid),
    userId: Number(r.uid),
    email: r.email,
    name: r.name,
    siteId: r.site_id == null ? null : Number(r.site_id),
    siteIds: r.scope ? r.scope.split(",").map(Number) : null,
  };
}

/** Members of the tenant subscribed to a site's shift handover, within their site scope. */
export async function handoverRecipients(tenantId: number, siteId: number, db: Sequelize = getSequelize()): Promise<Recipient[]> {
  const rows = await db.query<Parameters<typeof mapRecipient>[0]>(`${RECIPIENT_SQL} WHERE rs.tenant_id = ? AND rs.report = 'handover' AND rs.site_id = ?`, {
    replacements: [tenantId, siteId],
    type: QueryTypes.SELECT,
  });
  return rows.map(mapRecipient).filter((r) => !r.siteIds || r.siteIds.includes(siteId));
}

/** Every weekly subscription of current members, with the tenant's name. */
export async function weeklySubscriptions(db: Sequelize = getSequelize()): Promise<(Recipient & { tenantId: number; tenantName: string; report: ReportKind })[]> {
  const rows = await db.query<Parameters<typeof mapRecipient>[0] & { tenant_id: number; tname: string; report: ReportKind }>(
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

// ---------------------------------------------------------------- the caller's own subscriptions

export async function listMySubscriptions(ctx: { tenantId: number; userId: number }, db: Sequelize = getSequelize()): Promise<SubscriptionDto[]> {
  const rows = await db.query<{ id: number; report: ReportKind; cadence: "shift" | "weekly"; site_id: number | null; name: string | null }>(
    "SELECT rs.id, rs.report, rs.cadence, rs.site_id, s.name FROM report_subscriptions rs LEFT JOIN sites s ON s.id = rs.site_id WHERE rs.tenant_id = ? AND rs.user_id = ? ORDER BY rs.id",
    { replacements: [ctx.tenantId, ctx.userId], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({ id: Number(r.id), report: r.report, cadence: r.cadence, siteId: r.site_id == null ? null : Number(r.site_id), siteName: r.name }));
}

export async function subscribe(
  ctx: { tenantId: number; userId: number; siteIds?: number[] | null },
  input: z.infer<typeof subscriptionInputSchema>,
  db: Sequelize = getSequelize(),
): Promise<SubscriptionDto> {
  if (input.siteId !== undefined) {
    const [site] = await db.query<{ id: number }>("SELECT id FROM sites WHERE id = ? AND tenant_id = ?", { replacements: [input.siteId, ctx.tenantId], type: QueryTypes.SELECT });
    if (!site || (ctx.siteIds && !ctx.siteIds.includes(input.siteId))) throw new NotFoundError("Site");
  }
  const [id] = (await db.query("INSERT INTO report_subscriptions (tenant_id, user_id, report, cadence, site_id) VALUES (?,?,?,?,?)", {
    replacements: [ctx.tenantId, ctx.userId, input.report, input.cadence, input.siteId ?? null],
    type: QueryTypes.INSERT,
  })) as unknown as [number];
  const mine = (await listMySubscriptions(ctx, db)).find((s) => s.id === Number(id));
  if (!mine) throw new Error("The subscription just written could not be read back.");
  return mine;
}

/** Remove one of the caller's own subscriptions (another user's or tenant's is a 404). */
export async function unsubscribe(ctx: { tenantId: number; userId: number }, id: number, db: Sequelize = getSequelize()): Promise<void> {
  const [, meta] = (await db.query("DELETE FROM report_subscriptions WHERE id = ? AND tenant_id = ? AND user_id = ?", { replacements: [id, ctx.tenantId, ctx.userId] })) as unknown as [
    unknown,
    { affectedRows?: number } | number,
  ];
  const affected = typeof meta === "number" ? meta : (meta?.affectedRows ?? 0);
  if (!affected) throw new NotFoundError("Subscription");
}
