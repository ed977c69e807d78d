/**
 * The operator log and the loop timeline: their SQL. Node only; plain typed objects out. The rules
 * (tenancy, site scope, append-only corrections) are applied by lib/reports/notes.ts and timeline.ts.
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { getSequelize } from "@/lib/data/db/sequelize";
import type { NoteDto, NoteFilter, NoteKind } from "@/lib/reports/notes";

async function one<T extends object>(db: Sequelize, sql: string, replacements: unknown[]): Promise<T | undefined> {
  const rows = await db.query<T>(sql, { replacements, type: QueryTypes.SELECT });
  return rows[0];
}

const nullableId = (v: unknown) => (v == null ? null : Number(v));

/** Site and area of a loop of the tenant, or undefined. */
export async function noteLoopPlace(tenantId: number, loopId: number, db: Sequelize = getSequelize()): Promise<{ siteId: number; areaId: number | null } | undefined> {
  const r = await one<{ site_id: number; area_id: number | null }>(db, "SELECT site_id, area_id FROM loops WHERE id = ? AND tenant_id = ?", [loopId, tenantId]);
  return r && { siteId: Number(r.site_id), areaId: nullableId(r.area_id) };
}

/** Site, area and loop of an alarm of the tenant, or undefined. */
export async function noteAlarmPlace(tenantId: number, alarmId: number, db: Sequelize = getSequelize()): Promise<{ siteId: number; areaId: number | null; loopId: number } | undefined> {
  const r = await one<{ site_id: number; area_id: number | null; loop_id: number }>(
    db,
    "SELECT l.site_id, l.area_id, a.loop_id FROM alarms a JOIN loops l ON l.id = a.loop_id WHERE a.id = ? AND a.tenant_id = ?",
    [alarmId, tenantId],
  );
  return r && { siteId: Number(r.site_id), areaId: nullableId(r.area_id), loopId: Number(r.loop_id) };
}

/** Whether a site of the tenant exists, and (when given) an area of that site. */
export async function siteAndAreaExist(tenantId: number, siteId: number, areaId: number | undefined, db: Sequelize = getSequelize()): Promise<{ site: boolean; area: boolean }> {
  const site = await one<{ id: number }>(db, "SELECT id FROM sites WHERE id = ? AND tenant_id = ?", [siteId, tenantId]);
  if (!site || areaId === undefined) return { site: !!site, area: areaId === undefined };
  const area = await one<{ id: number }>(db, "SELECT id FROM areas WHERE id = ? AND site_id = ? AND tenant_id = ?", [areaId, siteId, tenantId]);
  return { site: true, area: !!area };
}

/** The site of a note of the tenant, or undefined. */
export async function noteSite(tenantId: number, noteId: number, db: Sequelize = getSequelize()): Promise<number | undefined> {
  const r = await one<{ site_id: number }>(db, "SELECT site_id FROM operator_notes WHERE id = ? AND tenant_id = ?", [noteId, tenantId]);
  return r && Number(r.site_id);
}

export interface NoteRow {
  tenantId: number;
  siteId: number;
  areaId: number | null;
  loopId: number | null;
  alarmId: number | null;
  kind: NoteKind;
  authorId: number;
  authorName: string;
  text: string;
  correctsId: number | null;
  at: number;
}

/** Append a note (the table refuses UPDATE and DELETE); returns its id. */
export async function insertNote(n: NoteRow, db: Sequelize = getSequelize()): Promise<number> {
  const [insertId] = (await db.query(
    `INSERT INTO operator_notes (tenant_id, site_id, area_id, loop_id, alarm_id, kind, author_id, author_name, text, corrects_id, at)
     VALUES (?,?,?,?,?,?,?,?,?,?,?)`,
    { replacements: [n.tenantId, n.siteId, n.areaId, n.loopId, n.alarmId, n.kind, n.authorId, n.authorName, n.text, n.correctsId, new Date(n.at)], type: QueryTypes.INSERT },
  )) as unknown as [number];
  return Number(insertId);
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

/** Notes of a tenant under a filter, newest first; `scope` is the caller's site scope (null = all). */
export async function selectNotes(tenantId: number, scope: number[] | null | undefined, f: NoteFilter, db: Sequelize = getSequelize()): Promise<NoteDto[]> {
  const where = ["n.tenant_id = ?"];
  const args: unknown[] = [tenantId];
  const add = (sql: string, v: unknown) => {
    where.push(sql);
    args.push(v);
  };
  if (f.ids) add("n.id IN (?)", f.ids.length ? f.ids : [0]);
  if (f.siteId !== undefined) add("n.site_id = ?", f.siteId);
  if (f.areaId !== undefined) add("n.area_id = ?", f.areaId);
  // An area's handover: the area's notes and the site-wide shift notes.
  if (f.areaOrSiteWide !== undefined) add("(n.area_id = ? OR (n.area_id IS NULL AND n.kind = 'shift'))", f.areaOrSiteWide);
  if (f.loopId !== undefined) add("n.loop_id = ?", f.loopId);
  if (f.alarmId !== undefined) add("n.alarm_id = ?", f.alarmId);
  if (f.kind !== undefined) add("n.kind = ?", f.kind);
  if (f.from !== undefined) add("n.at >= ?", new Date(f.from));
  if (f.to !== undefined) add("n.at < ?", new Date(f.to));
  if (f.siteIds) add("n.site_id IN (?)", f.siteIds.length ? f.siteIds : [0]);
  if (scope) add("n.site_id IN (?)", scope.length ? scope : [0]);
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

// ---------------------------------------------------------------- the loop timeline's sources

export async function timelineAlarmEvents(tenantId: number, loopId: number, from: number, to: number, limit: number, db: Sequelize = getSequelize()) {
  return db.query<{ id: number; alarm_id: number; at: Date; kind: string; to_state: string | null; comment: string | null; condition: string; name: string | null }>(
    `SELECT e.id, e.alarm_id, e.at, e.kind, e.to_state, e.comment, a.\`condition\`, u.name
       FROM alarm_events e JOIN alarms a ON a.id = e.alarm_id LEFT JOIN users u ON u.id = e.user_id
      WHERE e.loop_id = ? AND e.tenant_id = ? AND e.at >= ? AND e.at < ? ORDER BY e.at DESC LIMIT ${Math.trunc(limit)}`,
    { replacements: [loopId, tenantId, new Date(from), new Date(to)], type: QueryTypes.SELECT },
  );
}

export async function timelineConfigChanges(tenantId: number, loopId: number, from: number, to: number, limit: number, db: Sequelize = getSequelize()) {
  return db.query<{ id: number; at: Date; diff: unknown; reason: string | null; moc_reference: string | null; name: string | null }>(
    `SELECT c.id, c.at, c.diff, c.reason, c.moc_reference, u.name FROM config_changes c LEFT JOIN users u ON u.id = c.user_id
      WHERE c.tenant_id = ? AND c.entity = 'loop' AND c.entity_id = ? AND c.at >= ? AND c.at < ? ORDER BY c.at DESC LIMIT ${Math.trunc(limit)}`,
    { replacements: [tenantId, loopId, new Date(from), new Date(to)], type: QueryTypes.SELECT },
  );
}

/** Tracker-state snapshots in [from, to) and the one before `from` (the state the window starts in). */
export async function timelineSnapshots(loopId: number, from: number, to: number, db: Sequelize = getSequelize()) {
  return db.query<{ t: number; tracker_state: string }>(
    `(SELECT t, tracker_state FROM pole_snapshots WHERE loop_id = ? AND t < ? ORDER BY t DESC LIMIT 1)
     UNION ALL (SELECT t, tracker_state FROM pole_snapshots WHERE loop_id = ? AND t >= ? AND t < ? ORDER BY t)`,
    { replacements: [loopId, from, loopId, from, to], type: QueryTypes.SELECT },
  );
}
