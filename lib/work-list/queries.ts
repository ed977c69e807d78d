/**
 * The engineering work list as the console reads and edits it (tenant-scoped: every query is
 * bound to the context's tenant through lib/tenancy.ts; SQL in lib/data/work-list.ts). Engineers change status and owner and add
 * notes; viewers and operators read. Every change is one row of `work_item_events` (append-only).
 * Status: open -> in-work -> closed (closing needs a note); a closed item can be reopened unless the
 * same finding has opened a new item for the loop meanwhile (409).
 */
import type { Transaction } from "sequelize";
import { z } from "zod";
import {
  inWorkListTransaction,
  insertWorkItemEvent,
  isTenantMember,
  otherOpenItemExists,
  selectOwners,
  selectWorkItem,
  selectWorkItemEvents,
  selectWorkItems,
  updateWorkItemOwner,
  updateWorkItemStatus,
  type WorkItemRow,
} from "@/lib/data/work-list";
import { ConflictError, NotFoundError, ValidationError } from "@/lib/domain/errors";
import type { DiagnosisLabel } from "@/lib/assessment/types";
import type { FindingFigures } from "@/lib/domain/findings";
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

const json = <T>(v: unknown): T => (typeof v === "string" ? (JSON.parse(v) as T) : (v as T));
const iso = (d: Date | string) => new Date(d).toISOString();

function toDto(r: WorkItemRow): WorkItemDto {
  return {
    id: Number(r.id),
    loopId: Number(r.loop_id),
    tag: r.tag,
    siteId: Number(r.site_id),
    siteName: r.site_name,
    label: r.label as DiagnosisLabel,
    status: r.status as WorkStatus,
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

export const workListQuerySchema = z.object({
  siteId: z.coerce.number().int().positive().optional(),
  status: z.enum([...WORK_STATUSES, "active", "all"]).default("active"),
});

/** The tenant's items (newest first), per site and status; `active` = open or in work. */
export async function listWorkItems(
  ctx: TenantContext,
  q: z.infer<typeof workListQuerySchema>,
): Promise<WorkItemDto[]> {
  return (await selectWorkItems(ctx, q)).map(toDto);
}

async function itemRow(ctx: TenantContext, id: number, transaction?: Transaction): Promise<WorkItemRow> {
  // an item of a site outside the member's scope is a 404 like a missing one
  const row = await selectWorkItem(ctx, id, transaction);
  if (!row) throw new NotFoundError("Work item");
  return row;
}

/** One item with its history (oldest first). Another tenant's id is a 404 like a missing one. */
export async function getWorkItem(
  ctx: TenantContext,
  id: number,
): Promise<{ item: WorkItemDto; history: WorkItemEventDto[] }> {
  const item = toDto(await itemRow(ctx, id));
  const rows = await selectWorkItemEvents(ctx, id);
  const history = rows.map((e) => ({
    id: Number(e.id),
    kind: e.kind as WorkItemEventDto["kind"],
    fromStatus: e.from_status as WorkStatus | null,
    toStatus: e.to_status as WorkStatus | null,
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
  const note = patch.note && patch.note.length ? patch.note : null;
  await inWorkListTransaction(async (transaction) => {
    const row = await itemRow(ctx, id, transaction);
    const now = new Date();
    const event = (kind: WorkItemEventDto["kind"], extra: { from?: WorkStatus | null; to?: WorkStatus | null; ownerId?: number | null; note?: string | null }) =>
      insertWorkItemEvent(ctx, id, { kind, from: extra.from ?? null, to: extra.to ?? null, ownerId: extra.ownerId ?? null, note: extra.note ?? null, at: now }, transaction);
    let noteUsed = false;
    if (patch.ownerId !== undefined && patch.ownerId !== (row.owner_id === null ? null : Number(row.owner_id))) {
      if (patch.ownerId !== null && !(await isTenantMember(ctx, patch.ownerId, transaction))) throw new ValidationError("The owner must be a member of this tenant.");
      await updateWorkItemOwner(id, patch.ownerId, now, transaction);
      await event("owner", { ownerId: patch.ownerId });
    }
    const status = row.status as WorkStatus;
    if (patch.status !== undefined && patch.status !== status) {
      if (patch.status === "closed" && !note) throw new ValidationError("Closing an item needs a note (what was done, or why nothing is).");
      if (status === "closed" && (await otherOpenItemExists(Number(row.loop_id), row.label, id, transaction)))
        throw new ConflictError("The same finding has a newer open item for this loop; work on that one.");
      await updateWorkItemStatus(id, patch.status, patch.status === "closed" ? now : null, now, transaction);
      await event(status === "closed" ? "reopened" : "status", { from: status, to: patch.status, note });
      noteUsed = true;
    }
    if (note && !noteUsed) await event("note", { note });
  });
  return getWorkItem(ctx, id);
}

/** Members of the tenant who can own an item (engineers and admins). */
export async function listOwners(ctx: TenantContext): Promise<{ id: number; name: string }[]> {
  return selectOwners(ctx);
}
