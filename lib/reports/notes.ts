/**
 * The operator log: append-only notes on a loop, an alarm or (shift notes) a site/area. Every SQL
 * statement of the log is here; plain typed objects out. A note of another tenant, or on a loop,
 * alarm, site or area of another tenant, is a 404 like a missing one (lib/tenancy.ts rule).
 * A correction is a new note whose `correctsId` names the old one; nothing is ever edited.
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { z } from "zod";
import { getSequelize } from "@/lib/db/sequelize";
import { NotFoundError } from "@/lib/domain/errors";
import { assertSiteVisible, siteVisible } from "@/lib/tenancy";
import type { TenantContext } from "@/lib/domain/types";

export type NoteKind = "loop" | "alarm" | "shift";

export interface NoteDto {
  id: number;
  kind: NoteKind;
  siteId: number;
  areaId: number | null;
  loopId: number | null;
  alarmId: number | null;
  authorId: number | null;
  authorName: string;
  text: string;
  correctsId: number | null;
  /** Epoch ms. */
  at: number;
  /** Tag of the loop, when the note is on a loop or an alarm. */
  loopTag: string | null;
}

const text = z.string().trim().min(1, "a note needs text").max(2000, "a note holds at most 2000 characters");
const id = z.coerce.number().int().positive();

export const noteInputSchema = z.discriminatedUnion("kind", [
  z.object({ kind: z.literal("loop"), loopId: id, text, correctsId: id.optional() }).strict(),
  z.object({ kind: z.literal("alarm"), alarmId: id, text, correctsId: id.optional() }).strict(),
  z.object({ kind: z.literal("shift"), siteId: id, areaId: id.optional(), text, correctsId: id.optional() }).strict(),
]);
export type NoteInput = z.infer<typeof noteInputSchema>;

type NoteCtx = Pick<TenantContext, "tenantId" | "userId" | "name" | "siteIds">;

interface Subject {
  siteId: number;
  areaId: number | null;
  loopId: number | null;
  alarmId: number | null;
}

async function one<T extends object>(db: Sequelize, sql: string, replacements: unknown[]): Promise<T | undefined> {
  const rows = await db.query<T>(sql, { replacements, type: QueryTypes.SELECT });
  return rows[0];
}

async function subjectOf(db: Sequelize, ctx: NoteCtx, input: NoteInput): Promise<Subject> {
  if (input.kind === "loop") {
    const r = await one<{ site_id: number; area_id: number | null }>(db, "SELECT site_id, area_id FROM loops WHERE id = ? AND tenant_id = ?", [input.loopId, ctx.tenantId]);
    if (!r) throw new NotFoundError("Loop");
    return { siteId: Number(r.site_id), areaId: r.area_id == null ? null : Number(r.area_id), loopId: input.loopId, alarmId: null };
  }
  if (input.kind === "alarm") {
    const r = await one<{ site_id: number; area_id: number | null; loop_id: number }>(
      db,
      "SELECT l.site_id, l.area_id, a.loop_id FROM alarms a JOIN loops l ON l.id = a.loop_id WHERE a.id = ? AND a.tenant_id = ?",
      [input.alarmId, ctx.tenantId],
    );
    if (!r) throw new NotFoundError("Alarm");
    return { siteId: Number(r.site_id), areaId: r.area_id == null ? null : Number(r.area_id), loopId: Number(r.loop_id), alarmId: input.alarmId };
  }
  const site = await one<{ id: number }>(db, "SELECT id FROM sites WHERE id = ? AND tenant_id = ?", [input.siteId, ctx.tenantId]);
  if (!site) throw new NotFoundError("Site");
  if (input.areaId !== undefined) {
    const area = await one<{ id: number }>(db, "SELECT id FROM areas WHERE id = ? AND site_id = ? AND tenant_id = ?", [input.areaId, input.siteId, ctx.tenantId]);
    if (!area) throw new NotFoundError("Area");
  }
  return { siteId: input.siteId, areaId: input.areaId ?? null, loopId: null, alarmId: null };
}

/** Append a note; returns it as stored. `at` defaults to now (epoch ms). */
export async function createNote(ctx: NoteCtx, input: NoteInput, at: number = Date.now(), db: Sequelize = getSequelize()): Promise<NoteDto> {
  const s = await subjectOf(db, ctx, input);
  assertSiteVisible(ctx, s.siteId, input.kind === "loop" ? "Loop" : input.kind === "alarm" ? "Alarm" : "Site");
  if (input.correctsId !== undefined) {
    const old = await one<{ id: number; site_id: number }>(db, "SELECT id, site_id FROM operator_notes WHERE id = ? AND tenant_id = ?", [input.correctsId, ctx.tenantId]);
    if (!old || !siteVisible(ctx, Number(old.site_id))) throw new NotFoundError("Note");
  }
  const [insertId] = (await db.query(
    `INSERT INTO operator_notes (tenant_id, site_id, area_id, loop_id, alarm_id, kind, author_id, author_name, text, corrects_id, at)
     VALUES (?,?,?,?,?,?,?,?,?,?,?)`,
    {
      replacements: [ctx.tenantId, s.siteId, s.areaId, s.loopId, s.alarmId, input.kind, ctx.userId, ctx.name, input.text, input.correctsId ?? null, new Date(at)],
      type: QueryTypes.INSERT,
    },
  )) as unknown as [number];
  const [note] = await listNotes(ctx, { ids: [Number(insertId)] }, db);
  if (!note) throw new Error("The note just written could not be read back.");
  return note;
}

export interface NoteFilter {
  ids?: number[];
  siteId?: number;
  areaId?: number;
  loopId?: number;
  alarmId?: number;
  kind?: NoteKind;
  /** Epoch ms, inclusive. */
  from?: number;
  /** Epoch ms, exclusive. */
  to?: number;
  /** Site scope of the caller (null/undefined: every site of the tenant). */
  siteIds?: number[] | null;
  limit?: number;
}

interface RawNote {
  id: number;
  kind: NoteKind;
  site_id: number;
  area_id: number | null;
  loop_id: number | null;
  alarm_id: number | null;
  author_id: number | null;
  author_name: string;
  text: string;
  corrects_id: number | null;
  at: Date;
  tag: string | null;
}

const nullableId = (v: unknown) => (v == null ? null : Number(v));

/** Notes of the caller's tenant, newest first. */
export async function listNotes(ctx: Pick<TenantContext, "tenantId" | "siteIds">, f: NoteFilter = {}, db: Sequelize = getSequelize()): Promise<NoteDto[]> {
  const where = ["n.tenant_id = ?"];
  const args: unknown[] = [ctx.tenantId];
  const add = (sql: string, v: unknown) => {
    where.push(sql);
    args.push(v);
  };
  if (f.ids) add("n.id IN (?)", f.ids.length ? f.ids : [0]);
  if (f.siteId !== undefined) add("n.site_id = ?", f.siteId);
  if (f.areaId !== undefined) add("n.area_id = ?", f.areaId);
  if (f.loopId !== undefined) add("n.loop_id = ?", f.loopId);
  if (f.alarmId !== undefined) add("n.alarm_id = ?", f.alarmId);
  if (f.kind !== undefined) add("n.kind = ?", f.kind);
  if (f.from !== undefined) add("n.at >= ?", new Date(f.from));
  if (f.to !== undefined) add("n.at < ?", new Date(f.to));
  if (f.siteIds) add("n.site_id IN (?)", f.siteIds.length ? f.siteIds : [0]);
  if (ctx.siteIds) add("n.site_id IN (?)", ctx.siteIds.length ? ctx.siteIds : [0]);
  const limit = Math.min(Math.max(f.limit ?? 500, 1), 5000);
  const rows = await db.query<RawNote>(
    `SELECT n.id, n.kind, n.site_id, n.area_id, n.loop_id, n.alarm_id, n.author_id, n.author_name, n.text, n.corrects_id, n.at, l.tag
       FROM operator_notes n LEFT JOIN loops l ON l.id = n.loop_id
      WHERE ${where.join(" AND ")} ORDER BY n.at DESC, n.id DESC LIMIT ${limit}`,
    { replacements: args, type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({
    id: Number(r.id),
    kind: r.kind,
    siteId: Number(r.site_id),
    areaId: nullableId(r.area_id),
    loopId: nullableId(r.loop_id),
    alarmId: nullableId(r.alarm_id),
    authorId: nullableId(r.author_id),
    authorName: r.author_name,
    text: r.text,
    correctsId: nullableId(r.corrects_id),
    at: new Date(r.at).getTime(),
    loopTag: r.tag ?? null,
  }));
}
