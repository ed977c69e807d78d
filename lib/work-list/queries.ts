/**
 * The engineering work list as the console reads and edits it (tenant-scoped: every query is
 * bound to the context's tenant through lib/tenancy.ts). Engineers change status and owner and add
 * notes; viewers and operators read. Every change is one row of `work_item_events` (append-only).
 * Status: open -> in-work -> closed (closing needs a note); a closed item can be reopened unless the
 * same finding has opened a new item for the loop meanwhile (409).
 */
import { QueryTypes, type Transaction } from "sequelize";
import { z } from "zod";
import { getDb } from "@/lib/db/sequelize";
import { ConflictError, NotFoundError, ValidationError } from "@/lib/domain/errors";
import type { DiagnosisLabel } from "@/lib/assessment/types";
import type { FindingFigures } from "@/lib/domain/findings";
import { scoped, siteScopeSql } from "@/lib/tenancy";
import { text } from "@/lib/text-input";
import type { TenantContext } from "@/lib/domain/types";

export const WORK_STATUSES = ["open", "in-work", "closed"] as const;
export type WorkStatus = (typeof WORK_STATUSES)[number];

export interface WorkItemDto {
  id: number;
  loopId: number;
  tag: string;
  siteId: number;
  siteName: string;
  label: DiagnosisLabel;
  status: WorkStatus;
  confidence: number;
  owner: { id: number; name: string } | null;
  openedAt: string;
  lastSeenAt: string;
  closedAt: string | null;
  seenCount: number;
  figuresAtOpen: FindingFigures;
  figuresLatest: FindingFigures;
  evidence: string[];
}

export interface WorkItemEventDto {
  id: number;
  kind: "opened" | "status" | "owner" | "note" | "reopened";
  fromStatus: WorkStatus | null;
  toStatus: WorkStatus | null;
  owner: { id: number; name: string } | null;
  note: string | null;
  by: { id: number; name: string } | null;
  at: string;
}

type ItemRow = {
  id: number;
  loop_id: number;
  tag: string;
  site_id: number;
  site_name: string;
  label: DiagnosisLabel;
  status: WorkStatus;
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

const json = <T>(v: unknown): T => (typeof v === "string" ? (JSON.parse(v) as T) : (v as T));
const iso = (d: Date | string) => new Date(d).toISOString();

function toDto(r: ItemRow): WorkItemDto {
  return {
    id: Number(r.id),
    loopId: Number(r.loop_id),
    tag: r.tag,
    siteId: Number(r.site_id),
    siteName: r.site_name,
    label: r.label,
    status: r.status,
    confidence: Number(r.confidence),
    owner: r.owner_id === null ? null : { id: Number(r.owner_id), name: r.owner_name ?? "" },
    openedAt: iso(r.opened_at),
    lastSeenAt: iso(r.last_seen_at),
    closedAt: r.closed_at ? iso(r.closed_at) : null,
    seenCount: Number(r.seen_count),
    figuresAtOpen: json<FindingFigures>(r.figures_at_open),
    figuresLatest: json<FindingFigures>(r.figures_latest),
    evidence: json<string[]>(r.evidence),
  };
}

const SELECT_ITEMS = `SELECT w.*, l.tag, s.name AS site_name, u.name AS owner_name
  FROM work_items w JOIN loops l ON l.id = w.loop_id JOIN sites s ON s.id = w.site_id LEFT JOIN users u ON u.id = w.owner_id`;

export const workListQuerySchema = z.object({
  siteId: z.coerce.number().int().positive().optional(),
  status: z.enum([...WORK_STATUSES, "active", "all"]).default("active"),
});

/** The tenant's items (newest first), per site and status; `active` = open or in work. */
export async function listWorkItems(
  ctx: TenantContext,
  q: z.infer<typeof workListQuerySchema>,
): Promise<WorkItemDto[]> {
  const { tenantId } = scoped(ctx);
  const site = siteScopeSql(ctx, "w.site_id");
  const where = [`w.tenant_id = ?${site.sql}`];
  const args: unknown[] = [tenantId, ...site.args];
  if (q.siteId !== undefined) {
    where.push("w.site_id = ?");
    args.push(q.siteId);
  }
  if (q.status === "active") where.push("w.status <> 'closed'");
  else if (q.status !== "all") {
    where.push("w.status = ?");
    args.push(q.status);
  }
  const rows = await getDb().sequelize.query<ItemRow>(
    `${SELECT_ITEMS} WHERE ${where.join(" AND ")} ORDER BY w.opened_at DESC, w.id DESC LIMIT 1000`,
    {
      replacements: args,
      type: QueryTypes.SELECT,
    },
  );
  return rows.map(toDto);
}

async function itemRow(
  ctx: TenantContext,
  id: number,
  transaction?: Transaction,
): Promise<ItemRow> {
  const { tenantId } = scoped(ctx);
  // an item of a site outside the member's scope is a 404 like a missing one
  const site = siteScopeSql(ctx, "w.site_id");
  const [row] = await getDb().sequelize.query<ItemRow>(
    `${SELECT_ITEMS} WHERE w.id = ? AND w.tenant_id = ?${site.sql}${transaction ? " FOR UPDATE" : ""}`,
    {
      replacements: [id, tenantId, ...site.args],
      type: QueryTypes.SELECT,
      transaction,
    },
  );
  if (!row) throw new NotFoundError("Work item");
  return row;
}

/** One item with its history (oldest first). Another tenant's id is a 404 like a missing one. */
export async function getWorkItem(
  ctx: TenantContext,
  id: number,
): Promise<{ item: WorkItemDto; history: WorkItemEventDto[] }> {
  const item = toDto(await itemRow(ctx, id));
  const rows = await getDb().sequelize.query<{
    id: number;
    kind: WorkItemEventDto["kind"];
    from_status: WorkStatus | null;
    to_status: WorkStatus | null;
    owner_id: number | null;
    owner_name: string | null;
    note: string | null;
    user_id: number | null;
    user_name: string | null;
    at: Date;
  }>(
    `SELECT e.*, o.name AS owner_name, u.name AS user_name FROM work_item_events e
       LEFT JOIN users o ON o.id = e.owner_id LEFT JOIN users u ON u.id = e.user_id
      WHERE e.work_item_id = ? AND e.tenant_id = ? ORDER BY e.at, e.id`,
    { replacements: [id, scoped(ctx).tenantId], type: QueryTypes.SELECT },
  );
  const history = rows.map((e) => ({
    id: Number(e.id),
    kind: e.kind,
    fromStatus: e.from_status,
    toStatus: e.to_status,
    owner: e.owner_id === null ? null : { id: Number(e.owner_id), name: e.owner_name ?? "" },
    note: e.note,
    by: e.user_id === null ? null : { id: Number(e.user_id), name: e.user_name ?? "" },
    at: iso(e.at),
  }));
  return { item, history };
}

export const workItemPatchSchema = z
  .object({
    status: z.enum(WORK_STATUSES).optional(),
    /** A member of the tenant, or null to clear. */
    ownerId: z.number().int().positive().nullable().optional(),
    note: text().trim().max(2_000).optional(),
  })
  .strict()
  .refine(
    (p) =>
      p.status !== undefined ||
      p.ownerId !== undefined ||
      (p.note !== undefined && p.note.length > 0),
    "Give a status, an owner or a note.",
  );

/** Changes status, owner or adds a note (engineer); one history row per change. */
export async function updateWorkItem(
  ctx: TenantContext,
  id: number,
  patch: z.infer<typeof workItemPatchSchema>,
): Promise<{ item: WorkItemDto; history: WorkItemEventDto[] }> {
  const { sequelize } = getDb();
  const { tenantId } = scoped(ctx);
  const note = patch.note && patch.note.length ? patch.note : null;
  await sequelize.transaction(async (transaction) => {
    const row = await itemRow(ctx, id, transaction);
    const now = new Date();
    const event = (
      kind: WorkItemEventDto["kind"],
      extra: {
        from?: WorkStatus | null;
        to?: WorkStatus | null;
        ownerId?: number | null;
        note?: string | null;
      },
    ) =>
      sequelize.query(
        "INSERT INTO work_item_events (tenant_id, work_item_id, user_id, kind, from_status, to_status, owner_id, note, at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
        {
          replacements: [
            tenantId,
            id,
            ctx.userId,
            kind,
            extra.from ?? null,
            extra.to ?? null,
            extra.ownerId ?? null,
            extra.note ?? null,
            now,
          ],
          transaction,
        },
      );
    let noteUsed = false;
    if (
      patch.ownerId !== undefined &&
      patch.ownerId !== (row.owner_id === null ? null : Number(row.owner_id))
    ) {
      if (patch.ownerId !== null) {
        const [m] = await sequelize.query(
          "SELECT 1 AS ok FROM memberships WHERE tenant_id = ? AND user_id = ?",
          { replacements: [tenantId, patch.ownerId], type: QueryTypes.SELECT, transaction },
        );
        if (!m) throw new ValidationError("The owner must be a member of this tenant.");
      }
      await sequelize.query("UPDATE work_items SET owner_id = ?, updated_at = ? WHERE id = ?", {
        replacements: [patch.ownerId, now, id],
        transaction,
      });
      await event("owner", { ownerId: patch.ownerId });
    }
    if (patch.status !== undefined && patch.status !== row.status) {
      if (patch.status === "closed" && !note)
        throw new ValidationError(
          "Closing an item needs a note (what was done, or why nothing is).",
        );
      if (row.status === "closed") {
        const [open] = await sequelize.query(
          "SELECT id FROM work_items WHERE loop_id = ? AND open_key = ? AND id <> ?",
          {
            replacements: [row.loop_id, row.label, id],
            type: QueryTypes.SELECT,
            transaction,
          },
        );
        if (open)
          throw new ConflictError(
            "The same finding has a newer open item for this loop; work on that one.",
          );
      }
      await sequelize.query(
        "UPDATE work_items SET status = ?, closed_at = ?, updated_at = ? WHERE id = ?",
        {
          replacements: [patch.status, patch.status === "closed" ? now : null, now, id],
          transaction,
        },
      );
      await event(row.status === "closed" ? "reopened" : "status", {
        from: row.status,
        to: patch.status,
        note,
      });
      noteUsed = true;
    }
    if (note && !noteUsed) await event("note", { note });
  });
  return getWorkItem(ctx, id);
}

/** Members of the tenant who can own an item (engineers and admins). */
export async function listOwners(ctx: TenantContext): Promise<{ id: number; name: string }[]> {
  const rows = await getDb().sequelize.query<{ id: number; name: string }>(
    "SELECT u.id, u.name FROM memberships m JOIN users u ON u.id = m.user_id WHERE m.tenant_id = ? AND m.role IN ('engineer', 'admin') ORDER BY u.name",
    { replacements: [scoped(ctx).tenantId], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({ id: Number(r.id), name: r.name }));
}
