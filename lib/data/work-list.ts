/**
 * Data layer of the engineering work list and the live assessment's records (node only): every SQL
 * statement of lib/work-list and server/assessment lives here; those modules keep the rules
 * (who may do what, status transitions, DTOs) and call these functions. Tenant-owned rows are
 * always bound to a tenant id, and reads for a member to the member's site scope (lib/data/tenancy.ts).
 */
import { QueryTypes, type Sequelize, type Transaction } from "sequelize";
import { getDb } from "@/lib/data/db/sequelize";
import type { TenantContext } from "@/lib/domain/types";
import { scoped, siteScopeSql } from "@/lib/data/tenancy";

type Scope = Pick<TenantContext, "tenantId" | "siteIds">;
const db = () => getDb().sequelize;
const json = <T>(v: unknown): T => (typeof v === "string" ? (JSON.parse(v) as T) : (v as T));

// ---------------------------------------------------------------- loops as the live assessment reads them

/**
 * The dead time of each loop's latest step test whose proposal was applied to the loop
 * (config_changes names it "#id file"), s, by loop id; loops without one are absent.
 */
export async function selectStepDeadTimes(sequelize: Sequelize, loopId?: number): Promise<Map<number, number>> {
  const rows = await sequelize.query<{ id: number; stepDeadTimeS: number | string | null }>(
    `SELECT l.id, (
        SELECT JSON_VALUE(st.result, '$.continuous.deadTimeS') FROM config_changes c
          JOIN step_tests st ON st.id = CAST(SUBSTRING_INDEX(SUBSTRING(JSON_VALUE(c.diff, '$.stepTest.to'), 2), ' ', 1) AS UNSIGNED)
                            AND st.loop_id = l.id AND st.tenant_id = l.tenant_id
         WHERE c.tenant_id = l.tenant_id AND c.entity = 'loop' AND c.entity_id = l.id AND JSON_VALUE(c.diff, '$.stepTest.to') LIKE '#%'
         ORDER BY c.at DESC, c.id DESC LIMIT 1
      ) AS stepDeadTimeS
     FROM loops l ${loopId === undefined ? "" : "WHERE l.id = ?"}`,
    { replacements: loopId === undefined ? [] : [loopId], type: QueryTypes.SELECT },
  );
  const out = new Map<number, number>();
  for (const r of rows) {
    const x = r.stepDeadTimeS === null ? NaN : Number(r.stepDeadTimeS);
    if (Number.isFinite(x) && x >= 0) out.set(Number(r.id), x);
  }
  return out;
}

// ---------------------------------------------------------------- latest assessments

export type AssessmentRow = { loop_id: number; tenant_id: number; assessed_at: Date; window_samples: number; window_s: number; report: unknown };

/** The tenant's stored assessments of loops within the member's site scope. */
export async function selectTenantAssessments(ctx: Scope): Promise<AssessmentRow[]> {
  const site = siteScopeSql(ctx, "l.site_id");
  return db().query<AssessmentRow>(
    `SELECT a.loop_id, a.tenant_id, a.assessed_at, a.window_samples, a.window_s, a.report FROM loop_assessments a
       JOIN loops l ON l.id = a.loop_id AND l.tenant_id = a.tenant_id
      WHERE a.tenant_id = ?${site.sql} ORDER BY a.loop_id`,
    { replacements: [scoped(ctx).tenantId, ...site.args], type: QueryTypes.SELECT },
  );
}

/** Whether the loop belongs to the tenant and lies within the member's site scope. */
export async function loopInScope(ctx: Scope, loopId: number): Promise<boolean> {
  const site = siteScopeSql(ctx, "site_id");
  const [row] = await db().query(`SELECT id FROM loops WHERE id = ? AND tenant_id = ?${site.sql}`, {
    replacements: [loopId, scoped(ctx).tenantId, ...site.args],
    type: QueryTypes.SELECT,
  });
  return !!row;
}

export async function selectLoopAssessment(ctx: Scope, loopId: number): Promise<AssessmentRow | null> {
  const [row] = await db().query<AssessmentRow>(
    "SELECT loop_id, tenant_id, assessed_at, window_samples, window_s, report FROM loop_assessments WHERE loop_id = ? AND tenant_id = ?",
    { replacements: [loopId, scoped(ctx).tenantId], type: QueryTypes.SELECT },
  );
  return row ?? null;
}

/** Every stored assessment (the live service restores them at start), or one tenant's. */
export async function selectAllAssessments(sequelize: Sequelize, tenantId?: number): Promise<AssessmentRow[]> {
  return sequelize.query<AssessmentRow>(
    `SELECT loop_id, tenant_id, assessed_at, window_samples, window_s, report FROM loop_assessments ${tenantId === undefined ? "" : "WHERE tenant_id = ?"}`,
    { replacements: tenantId === undefined ? [] : [tenantId], type: QueryTypes.SELECT },
  );
}

/** One row per loop: the latest assessment replaces the previous one. */
export async function upsertAssessment(
  sequelize: Sequelize,
  r: { loopId: number; tenantId: number; at: number; label: string; confidence: number; needsS: number | null; windowSamples: number; windowS: number; report: unknown },
): Promise<void> {
  await sequelize.query(
    `INSERT INTO loop_assessments (loop_id, tenant_id, assessed_at, label, confidence, needs_s, window_samples, window_s, report)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)
     ON DUPLICATE KEY UPDATE assessed_at = VALUES(assessed_at), label = VALUES(label), confidence = VALUES(confidence),
       needs_s = VALUES(needs_s), window_samples = VALUES(window_samples), window_s = VALUES(window_s), report = VALUES(report)`,
    { replacements: [r.loopId, r.tenantId, new Date(r.at), r.label, r.confidence, r.needsS, r.windowSamples, r.windowS, JSON.stringify(r.report)] },
  );
}

// ---------------------------------------------------------------- work items written by the live service

/** Latest figures on every item of the loop still open or in work. */
export async function updateOpenItemFigures(sequelize: Sequelize, loopId: number, figures: unknown, at: Date, transaction: Transaction): Promise<void> {
  await sequelize.query("UPDATE work_items SET figures_latest = ?, updated_at = ? WHERE loop_id = ? AND status <> 'closed'", {
    replacements: [JSON.stringify(figures), at, loopId],
    transaction,
  });
}

/** The open item of a loop and label (locked for the transaction), or null. */
export async function lockOpenItem(sequelize: Sequelize, loopId: number, label: string, transaction: Transaction): Promise<number | null> {
  const [row] = await sequelize.query<{ id: number }>("SELECT id FROM work_items WHERE loop_id = ? AND open_key = ? FOR UPDATE", {
    replacements: [loopId, label],
    type: QueryTypes.SELECT,
    transaction,
  });
  return row ? Number(row.id) : null;
}

export async function touchOpenItem(sequelize: Sequelize, id: number, f: { confidence: number; at: Date; evidence: string[] }, transaction: Transaction): Promise<void> {
  await sequelize.query("UPDATE work_items SET confidence = ?, last_seen_at = ?, seen_count = seen_count + 1, evidence = ? WHERE id = ?", {
    replacements: [f.confidence, f.at, JSON.stringify(f.evidence), id],
    transaction,
  });
}

/** A new open item with its `opened` history row; returns its id. */
export async function insertOpenItem(
  sequelize: Sequelize,
  f: { tenantId: number; siteId: number; loopId: number; label: string; confidence: number; at: Date; figures: unknown; evidence: string[]; note: string },
  transaction: Transaction,
): Promise<number> {
  const figures = JSON.stringify(f.figures);
  const [insertId] = (await sequelize.query(
    `INSERT INTO work_items (tenant_id, site_id, loop_id, label, status, confidence, opened_at, last_seen_at, figures_at_open, figures_latest, evidence, created_at, updated_at)
     VALUES (?, ?, ?, ?, 'open', ?, ?, ?, ?, ?, ?, ?, ?)`,
    { replacements: [f.tenantId, f.siteId, f.loopId, f.label, f.confidence, f.at, f.at, figures, figures, JSON.stringify(f.evidence), f.at, f.at], type: QueryTypes.INSERT, transaction },
  )) as unknown as [number, number];
  const id = Number(insertId);
  await sequelize.query(
    "INSERT INTO work_item_events (tenant_id, work_item_id, user_id, kind, from_status, to_status, note, at) VALUES (?, ?, NULL, 'opened', NULL, 'open', ?, ?)",
    { replacements: [f.tenantId, id, f.note, f.at], transaction },
  );
  return id;
}

/** Recipients of a tenant's enabled finding rules (notification_rules.kind = 'finding'). */
export async function selectFindingRecipientLists(sequelize: Sequelize, tenantId: number): Promise<unknown[]> {
  const rows = await sequelize.query<{ recipients: unknown }>("SELECT recipients FROM notification_rules WHERE tenant_id = ? AND enabled = 1 AND kind = 'finding'", {
    replacements: [tenantId],
    type: QueryTypes.SELECT,
  });
  return rows.map((r) => json<unknown>(r.recipients));
}

// ---------------------------------------------------------------- the work list as members read and edit it

export type WorkItemRow = {
  id: number;
  loop_id: number;
  tag: string;
  site_id: number;
  site_name: string;
  label: string;
  status: string;
  confidence: number;
  owner_id: number | null;
  owner_name: string | null;
  opened_at: Date;
  last_seen_at: Date;
  closed_at: Date | null;
  seen_count: number;
  figures_at_open: unknown;
  figures_latest: unknown;
  evidence: unknown;
};

const SELECT_ITEMS = `SELECT w.*, l.tag, s.name AS site_name, u.name AS owner_name
  FROM work_items w JOIN loops l ON l.id = w.loop_id JOIN sites s ON s.id = w.site_id LEFT JOIN users u ON u.id = w.owner_id`;

/** The tenant's items within the member's site scope, newest first (at most 1,000). `status` "active" = not closed. */
export async function selectWorkItems(ctx: Scope, q: { siteId?: number; status: string }): Promise<WorkItemRow[]> {
  const site = siteScopeSql(ctx, "w.site_id");
  const where = [`w.tenant_id = ?${site.sql}`];
  const args: unknown[] = [scoped(ctx).tenantId, ...site.args];
  if (q.siteId !== undefined) {
    where.push("w.site_id = ?");
    args.push(q.siteId);
  }
  if (q.status === "active") where.push("w.status <> 'closed'");
  else if (q.status !== "all") {
    where.push("w.status = ?");
    args.push(q.status);
  }
  return db().query<WorkItemRow>(`${SELECT_ITEMS} WHERE ${where.join(" AND ")} ORDER BY w.opened_at DESC, w.id DESC LIMIT 1000`, {
    replacements: args,
    type: QueryTypes.SELECT,
  });
}

/** One item of the tenant within the member's site scope (locked when in a transaction), or null. */
export async function selectWorkItem(ctx: Scope, id: number, transaction?: Transaction): Promise<WorkItemRow | null> {
  const site = siteScopeSql(ctx, "w.site_id");
  const [row] = await db().query<WorkItemRow>(`${SELECT_ITEMS} WHERE w.id = ? AND w.tenant_id = ?${site.sql}${transaction ? " FOR UPDATE" : ""}`, {
    replacements: [id, scoped(ctx).tenantId, ...site.args],
    type: QueryTypes.SELECT,
    transaction,
  });
  return row ?? null;
}

export type WorkItemEventRow = {
  id: number;
  kind: string;
  from_status: string | null;
  to_status: string | null;
  owner_id: number | null;
  owner_name: string | null;
  note: string | null;
  user_id: number | null;
  user_name: string | null;
  at: Date;
};

/** An item's history, oldest first. */
export async function selectWorkItemEvents(ctx: Scope, id: number): Promise<WorkItemEventRow[]> {
  return db().query<WorkItemEventRow>(
    `SELECT e.*, o.name AS owner_name, u.name AS user_name FROM work_item_events e
       LEFT JOIN users o ON o.id = e.owner_id LEFT JOIN users u ON u.id = e.user_id
      WHERE e.work_item_id = ? AND e.tenant_id = ? ORDER BY e.at, e.id`,
    { replacements: [id, scoped(ctx).tenantId], type: QueryTypes.SELECT },
  );
}

/** Runs `fn` in one transaction (of `sequelize`, else the application's connection). */
export function inWorkListTransaction<T>(fn: (t: Transaction) => Promise<T>, sequelize: Sequelize = db()): Promise<T> {
  return sequelize.transaction(fn);
}

export async function insertWorkItemEvent(
  ctx: Scope & Pick<TenantContext, "userId">,
  id: number,
  e: { kind: string; from: string | null; to: string | null; ownerId: number | null; note: string | null; at: Date },
  transaction: Transaction,
): Promise<void> {
  await db().query(
    "INSERT INTO work_item_events (tenant_id, work_item_id, user_id, kind, from_status, to_status, owner_id, note, at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
    { replacements: [scoped(ctx).tenantId, id, ctx.userId, e.kind, e.from, e.to, e.ownerId, e.note, e.at], transaction },
  );
}

export async function isTenantMember(ctx: Scope, userId: number, transaction?: Transaction): Promise<boolean> {
  const [m] = await db().query("SELECT 1 AS ok FROM memberships WHERE tenant_id = ? AND user_id = ?", {
    replacements: [scoped(ctx).tenantId, userId],
    type: QueryTypes.SELECT,
    transaction,
  });
  return !!m;
}

/** Item ids are checked against the tenant by `selectWorkItem` in the same transaction first. */
export async function updateWorkItemOwner(id: number, ownerId: number | null, at: Date, transaction: Transaction): Promise<void> {
  await db().query("UPDATE work_items SET owner_id = ?, updated_at = ? WHERE id = ?", { replacements: [ownerId, at, id], transaction });
}

export async function updateWorkItemStatus(id: number, status: string, closedAt: Date | null, at: Date, transaction: Transaction): Promise<void> {
  await db().query("UPDATE work_items SET status = ?, closed_at = ?, updated_at = ? WHERE id = ?", { replacements: [status, closedAt, at, id], transaction });
}

/** Another item of the loop open for the same finding. */
export async function otherOpenItemExists(loopId: number, label: string, exceptId: number, transaction: Transaction): Promise<boolean> {
  const [row] = await db().query("SELECT id FROM work_items WHERE loop_id = ? AND open_key = ? AND id <> ?", {
    replacements: [loopId, label, exceptId],
    type: QueryTypes.SELECT,
    transaction,
  });
  return !!row;
}

/** Engineers and admins of the tenant (who may own an item). */
export async function selectOwners(ctx: Scope): Promise<{ id: number; name: string }[]> {
  const rows = await db().query<{ id: number; name: string }>(
    "SELECT u.id, u.name FROM memberships m JOIN users u ON u.id = m.user_id WHERE m.tenant_id = ? AND m.role IN ('engineer', 'admin') ORDER BY u.name",
    { replacements: [scoped(ctx).tenantId], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({ id: Number(r.id), name: r.name }));
}

// ---------------------------------------------------------------- finding e-mail rules

export type FindingRuleRow = { id: number; name: string; recipients: unknown; enabled: number | boolean };

export async function selectFindingRules(ctx: Scope): Promise<FindingRuleRow[]> {
  return db().query<FindingRuleRow>("SELECT id, name, recipients, enabled FROM notification_rules WHERE tenant_id = ? AND kind = 'finding' ORDER BY id", {
    replacements: [scoped(ctx).tenantId],
    type: QueryTypes.SELECT,
  });
}

export async function insertFindingRule(ctx: Scope, r: { name: string; recipients: string[]; enabled: boolean }): Promise<number> {
  const { NotificationRule } = getDb().models;
  const row = await NotificationRule.create({
    tenantId: scoped(ctx).tenantId,
    areaId: null,
    name: r.name,
    kind: "finding",
    recipients: r.recipients,
    escalationMinutes: null,
    repeatMinutes: null,
    enabled: r.enabled,
  });
  return row.id;
}

/** Deletes one of the tenant's finding rules; false when there was none. */
export async function deleteFindingRuleRow(ctx: Scope, id: number): Promise<boolean> {
  const { NotificationRule } = getDb().models;
  const n = await NotificationRule.destroy({ where: { id, tenantId: scoped(ctx).tenantId, kind: "finding" } });
  return n > 0;
}
