/**
 * The shift handover's SQL: a site's (or one area's) loops, alarm occurrences, the last
 * shelve/service state of each alarm, tracker-state snapshots and read confirmations, each as it
 * stood at a given time. Node only; plain rows out (lib/reports/handover.ts assembles them).
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { getSequelize } from "@/lib/data/db/sequelize";
import type { AlarmPriority } from "@/lib/domain/types";

const select = <T extends object>(db: Sequelize, sql: string, replacements: unknown[]) => db.query<T>(sql, { replacements, type: QueryTypes.SELECT });

export async function siteShiftRow(tenantId: number, siteId: number, db: Sequelize = getSequelize()) {
  const [s] = await select<{ id: number; name: string; time_zone: string; shift_starts: string | null }>(
    db,
    "SELECT id, name, time_zone, shift_starts FROM sites WHERE id = ? AND tenant_id = ?",
    [siteId, tenantId],
  );
  return s;
}

/** The name of an area of a site of the tenant, or undefined. */
export async function siteAreaName(tenantId: number, siteId: number, areaId: number, db: Sequelize = getSequelize()): Promise<string | undefined> {
  const [a] = await select<{ name: string }>(db, "SELECT name FROM areas WHERE id = ? AND site_id = ? AND tenant_id = ?", [areaId, siteId, tenantId]);
  return a?.name;
}

/** The loops of a site, or of one of its areas. */
export async function handoverLoops(tenantId: number, siteId: number, areaId: number | null, db: Sequelize = getSequelize()) {
  return select<{ id: number; tag: string }>(
    db,
    `SELECT id, tag FROM loops WHERE tenant_id = ? AND site_id = ?${areaId === null ? "" : " AND area_id = ?"}`,
    areaId === null ? [tenantId, siteId] : [tenantId, siteId, areaId],
  );
}

export interface OccurrenceRow {
  alarm_id: number;
  loop_id: number;
  area_id: number | null;
  priority: AlarmPriority;
  condition: string;
  started_at: Date;
  ended_at: Date | null;
  acknowledged_at: Date | null;
}

/** Occurrences of the loops' alarms that started before `end` and were active at or after `start`. */
export async function handoverOccurrences(tenantId: number, loopIds: number[], start: number, end: number, db: Sequelize = getSequelize()) {
  return select<OccurrenceRow>(
    db,
    `SELECT alarm_id, loop_id, area_id, priority, \`condition\`, started_at, ended_at, acknowledged_at FROM alarm_occurrences
      WHERE tenant_id = ? AND loop_id IN (?) AND started_at < ? AND (started_at >= ? OR ended_at IS NULL OR ended_at > ?)`,
    [tenantId, loopIds.length ? loopIds : [0], new Date(end), new Date(start), new Date(start)],
  );
}

/** Work-list items of the loops opened in [start, end), oldest first (the engineering findings of a shift). */
export async function workItemsOpened(tenantId: number, loopIds: number[], start: number, end: number, db: Sequelize = getSequelize()) {
  return select<{ id: number; loop_id: number; label: string; confidence: number; opened_at: Date; evidence: unknown }>(
    db,
    `SELECT id, loop_id, label, confidence, opened_at, evidence FROM work_items
      WHERE tenant_id = ? AND loop_id IN (?) AND opened_at >= ? AND opened_at < ? ORDER BY opened_at, id`,
    [tenantId, loopIds.length ? loopIds : [0], new Date(start), new Date(end)],
  );
}

/** Alarms of the loops whose last state change before `end` shelved them or took them out of service. */
export async function outOfNormalAt(tenantId: number, loopIds: number[], end: number, db: Sequelize = getSequelize()) {
  return select<{ alarm_id: number; loop_id: number; to_state: string; comment: string | null; at: Date; name: string | null; condition: string }>(
    db,
    `SELECT e.alarm_id, e.loop_id, e.to_state, e.comment, e.at, u.name, a.\`condition\`
       FROM alarm_events e
       JOIN (SELECT alarm_id, MAX(id) AS id FROM alarm_events
              WHERE tenant_id = ? AND loop_id IN (?) AND at < ? AND to_state IS NOT NULL GROUP BY alarm_id) m ON m.id = e.id
       JOIN alarms a ON a.id = e.alarm_id LEFT JOIN users u ON u.id = e.user_id
      WHERE e.to_state IN ('shelved', 'out-of-service')`,
    [tenantId, loopIds.length ? loopIds : [0], new Date(end)],
  );
}

export interface SnapshotRow {
  loop_id: number;
  t: number;
  tracker_state: string;
  radius: number | null;
}

/** Each loop's last tracker-state snapshot before `start`. */
export async function snapshotsBefore(loopIds: number[], start: number, db: Sequelize = getSequelize()) {
  return select<SnapshotRow>(
    db,
    `SELECT p.loop_id, p.t, p.tracker_state, p.radius FROM pole_snapshots p
       JOIN (SELECT loop_id, MAX(t) AS t FROM pole_snapshots WHERE loop_id IN (?) AND t < ? GROUP BY loop_id) m
         ON m.loop_id = p.loop_id AND m.t = p.t`,
    [loopIds.length ? loopIds : [0], start],
  );
}

/** The loops' snapshots in [start, end), by loop and time. */
export async function snapshotsDuring(loopIds: number[], start: number, end: number, db: Sequelize = getSequelize()) {
  return select<SnapshotRow>(db, "SELECT loop_id, t, tracker_state, radius FROM pole_snapshots WHERE loop_id IN (?) AND t >= ? AND t < ? ORDER BY loop_id, t", [
    loopIds.length ? loopIds : [0],
    start,
    end,
  ]);
}

const ms = (d: unknown) => new Date(d as Date).getTime();

export async function listConfirmations(ctx: { tenantId: number }, siteId: number, shiftStart: number, db: Sequelize = getSequelize()) {
  const rows = await select<{ user_id: number; user_name: string; at: Date }>(
    db,
    "SELECT user_id, user_name, at FROM handover_confirmations WHERE tenant_id = ? AND site_id = ? AND shift_start = ? ORDER BY at",
    [ctx.tenantId, siteId, new Date(shiftStart)],
  );
  return rows.map((r) => ({ userId: Number(r.user_id), userName: r.user_name, at: ms(r.at) }));
}

/** Record a read confirmation; a second one of the same user and shift keeps the first. */
export async function insertConfirmation(
  c: { tenantId: number; siteId: number; shiftStart: number; shiftEnd: number; userId: number; userName: string; at: number },
  db: Sequelize = getSequelize(),
): Promise<void> {
  await db.query(`INSERT IGNORE INTO handover_confirmations (tenant_id, site_id, shift_start, shift_end, user_id, user_name, at) VALUES (?,?,?,?,?,?,?)`, {
    replacements: [c.tenantId, c.siteId, new Date(c.shiftStart), new Date(c.shiftEnd), c.userId, c.userName, new Date(c.at)],
    type: QueryTypes.INSERT,
  });
}
