/**
 * The operator log: append-only notes on a loop, an alarm or (shift notes) a site/area. Its SQL
 * is in lib/data/reports-log.ts; plain typed objects out. A note of another tenant, or on a loop,
 * alarm, site or area of another tenant, is a 404 like a missing one (lib/tenancy.ts rule).
 * A correction is a new note whose `correctsId` names the old one; nothing is ever edited.
 */
import type { Sequelize } from "sequelize";
import { z } from "zod";
import { insertNote, noteAlarmPlace, noteLoopPlace, noteSite, selectNotes, siteAndAreaExist } from "@/lib/data/reports-log";
import { NotFoundError } from "@/lib/domain/errors";
import { assertSiteVisible, siteVisible } from "@/lib/data/tenancy";
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

async function subjectOf(db: Sequelize | undefined, ctx: NoteCtx, input: NoteInput): Promise<Subject> {
  if (input.kind === "loop") {
    const r = await noteLoopPlace(ctx.tenantId, input.loopId, db);
    if (!r) throw new NotFoundError("Loop");
    return { ...r, loopId: input.loopId, alarmId: null };
  }
  if (input.kind === "alarm") {
    const r = await noteAlarmPlace(ctx.tenantId, input.alarmId, db);
    if (!r) throw new NotFoundError("Alarm");
    return { ...r, alarmId: input.alarmId };
  }
  const found = await siteAndAreaExist(ctx.tenantId, input.siteId, input.areaId, db);
  if (!found.site) throw new NotFoundError("Site");
  if (!found.area) throw new NotFoundError("Area");
  return { siteId: input.siteId, areaId: input.areaId ?? null, loopId: null, alarmId: null };
}

/** Append a note; returns it as stored. `at` defaults to now (epoch ms). */
export async function createNote(ctx: NoteCtx, input: NoteInput, at: number = Date.now(), db?: Sequelize): Promise<NoteDto> {
  const s = await subjectOf(db, ctx, input);
  assertSiteVisible(ctx, s.siteId, input.kind === "loop" ? "Loop" : input.kind === "alarm" ? "Alarm" : "Site");
  if (input.correctsId !== undefined) {
    const oldSite = await noteSite(ctx.tenantId, input.correctsId, db);
    if (oldSite === undefined || !siteVisible(ctx, oldSite)) throw new NotFoundError("Note");
  }
  const id = await insertNote(
    { tenantId: ctx.tenantId, ...s, kind: input.kind, authorId: ctx.userId, authorName: ctx.name, text: input.text, correctsId: input.correctsId ?? null, at },
    db,
  );
  const [note] = await listNotes(ctx, { ids: [id] }, db);
  if (!note) throw new Error("The note just written could not be read back.");
  return note;
}

export interface NoteFilter {
  ids?: number[];
  siteId?: number;
  areaId?: number;
  /** An area's notes and the site's shift notes without an area (an area's handover). */
  areaOrSiteWide?: number;
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

/** Notes of the caller's tenant, newest first. */
export async function listNotes(ctx: Pick<TenantContext, "tenantId" | "siteIds">, f: NoteFilter = {}, db?: Sequelize): Promise<NoteDto[]> {
  return selectNotes(ctx.tenantId, ctx.siteIds, f, db);
}
