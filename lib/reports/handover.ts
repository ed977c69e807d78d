/**
 * The shift handover of a site: what the incoming shift must know, as of the end of the outgoing
 * shift. Every figure is read as it stood at the shift's end (alarm occurrences, the alarm event
 * log, tracker-state snapshots), so a handover read a week later says the same. Every SQL
 * statement of the handover is here; plain typed objects out.
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { computeAlarmKpis, type AlarmKpis, type OccurrenceRecord } from "@/lib/domain/alarms/kpis";
import { getSequelize } from "@/lib/db/sequelize";
import { NotFoundError, ValidationError } from "@/lib/domain/errors";
import { assertSiteVisible } from "@/lib/tenancy";
import type { AlarmPriority } from "@/lib/domain/types";
import { listNotes, type NoteDto } from "./notes";
import { lastEndedShift, parseShiftStarts, shiftAt, type Shift } from "./shifts";

export interface SiteShiftInfo {
  siteId: number;
  siteName: string;
  timeZone: string;
  shiftStarts: number[];
}

export interface HandoverAlarm {
  alarmId: number;
  loopId: number;
  loopTag: string;
  condition: string;
  priority: AlarmPriority;
  startedAt: number;
  acknowledged: boolean;
  acknowledgedAt: number | null;
}

export interface HandoverOutOfNormal {
  alarmId: number;
  loopTag: string;
  condition: string;
  state: "shelved" | "out-of-service";
  reason: string | null;
  by: string | null;
  at: number;
}

export interface HandoverStateChange {
  loopId: number;
  loopTag: string;
  stateAtStart: string | null;
  stateAtEnd: string;
  changes: number;
  /** Jury verdict from the spectral radius at start and end ("stable", "unstable", "unknown"). */
  verdictAtStart: string;
  verdictAtEnd: string;
}

export interface HandoverManual {
  loopId: number;
  loopTag: string;
  state: "manual" | "saturated";
  since: number;
}

export interface Handover {
  tenantName: string;
  site: SiteShiftInfo;
  shift: Shift;
  /** Epoch ms the figures are read at: the shift's end, or now for a shift still running. */
  asOf: number;
  /** The shift has not ended yet: a preview, not the handover. */
  inProgress: boolean;
  /** Epoch ms when this was assembled. */
  generatedAt: number;
  activeAlarms: HandoverAlarm[];
  outOfNormal: HandoverOutOfNormal[];
  stateChanges: HandoverStateChange[];
  manualOrSaturated: HandoverManual[];
  notes: NoteDto[];
  kpis: AlarmKpis;
  confirmations: { userId: number; userName: string; at: number }[];
}

const PRIORITY_ORDER: Record<AlarmPriority, number> = { urgent: 0, high: 1, low: 2 };
const ms = (d: unknown) => new Date(d as Date).getTime();

/** The site's zone and shift starts, tenant-checked (404 for another tenant's site). */
export async function siteShiftInfo(ctx: { tenantId: number; siteIds?: number[] | null }, siteId: number, db: Sequelize = getSequelize()): Promise<SiteShiftInfo> {
  assertSiteVisible(ctx, siteId, "Site");
  const [s] = await db.query<{ id: number; name: string; time_zone: string; shift_starts: string | null }>(
    "SELECT id, name, time_zone, shift_starts FROM sites WHERE id = ? AND tenant_id = ?",
    { replacements: [siteId, ctx.tenantId], type: QueryTypes.SELECT },
  );
  if (!s) throw new NotFoundError("Site");
  return { siteId: Number(s.id), siteName: s.name, timeZone: s.time_zone, shiftStarts: parseShiftStarts(s.shift_starts) };
}

/**
 * The shift a handover is asked for: the one starting at `start`, "current" (the running shift,
 * a preview as of now), else the last one ended by `now`.
 */
export function resolveShift(site: SiteShiftInfo, start: number | "current" | undefined, now: number): Shift {
  if (start === undefined) return lastEndedShift(now, site.timeZone, site.shiftStarts);
  if (start === "current") return shiftAt(now, site.timeZone, site.shiftStarts);
  const s = shiftAt(start, site.timeZone, site.shiftStarts);
  if (s.start !== start) throw new ValidationError(`No shift of ${site.siteName} starts at ${new Date(start).toISOString()}; shifts start at the site's local ${site.shiftStarts.map((m) => `${String(Math.floor(m / 60)).padStart(2, "0")}:${String(m % 60).padStart(2, "0")}`).join(", ")}.`);
  if (s.end > now) throw new ValidationError("The handover of a shift is available from the end of the shift.");
  return s;
}

const verdictOf = (r: number | null | undefined) => (r == null || !Number.isFinite(r) ? "unknown" : r < 1 ? "stable" : "unstable");

export async function buildHandover(
  ctx: { tenantId: number; tenantName: string },
  site: SiteShiftInfo,
  shift: Shift,
  now: number = Date.now(),
  db: Sequelize = getSequelize(),
): Promise<Handover> {
  const { start } = shift;
  const end = Math.min(shift.end, now);
  const q = <T extends object>(sql: string, replacements: unknown[]) => db.query<T>(sql, { replacements, type: QueryTypes.SELECT });
  const loops = await q<{ id: number; tag: string }>("SELECT id, tag FROM loops WHERE tenant_id = ? AND site_id = ?", [ctx.tenantId, site.siteId]);
  const tagOf = new Map(loops.map((l) => [Number(l.id), l.tag]));
  const ids = loops.length ? loops.map((l) => Number(l.id)) : [0];

  const occRows = await q<{ alarm_id: number; loop_id: number; area_id: number | null; priority: AlarmPriority; condition: string; started_at: Date; ended_at: Date | null; acknowledged_at: Date | null }>(
    `SELECT alarm_id, loop_id, area_id, priority, \`condition\`, started_at, ended_at, acknowledged_at FROM alarm_occurrences
      WHERE tenant_id = ? AND loop_id IN (?) AND started_at < ? AND (started_at >= ? OR ended_at IS NULL OR ended_at > ?)`,
    [ctx.tenantId, ids, new Date(end), new Date(start), new Date(start)],
  );
  const occ: OccurrenceRecord[] = occRows.map((r) => ({
    alarmId: Number(r.alarm_id),
    loopId: Number(r.loop_id),
    areaId: r.area_id == null ? null : Number(r.area_id),
    priority: r.priority,
    startedAt: ms(r.started_at),
    endedAt: r.ended_at == null ? null : ms(r.ended_at),
  }));
  const activeAlarms: HandoverAlarm[] = occRows
    .filter((r) => r.ended_at == null || ms(r.ended_at) > end)
    .map((r) => {
      const ackAt = r.acknowledged_at == null ? null : ms(r.acknowledged_at);
      const acknowledged = ackAt !== null && ackAt <= end;
      return {
        alarmId: Number(r.alarm_id),
        loopId: Number(r.loop_id),
        loopTag: tagOf.get(Number(r.loop_id)) ?? `#${r.loop_id}`,
        condition: r.condition,
        priority: r.priority,
        startedAt: ms(r.started_at),
        acknowledged,
        acknowledgedAt: acknowledged ? ackAt : null,
      };
    })
    .sort((a, b) => PRIORITY_ORDER[a.priority] - PRIORITY_ORDER[b.priority] || Number(a.acknowledged) - Number(b.acknowledged) || a.startedAt - b.startedAt);

  const last = await q<{ alarm_id: number; loop_id: number; to_state: string; comment: string | null; at: Date; name: string | null; condition: string }>(
    `SELECT e.alarm_id, e.loop_id, e.to_state, e.comment, e.at, u.name, a.\`condition\`
       FROM alarm_events e
       JOIN (SELECT alarm_id, MAX(id) AS id FROM alarm_events
              WHERE tenant_id = ? AND loop_id IN (?) AND at < ? AND to_state IS NOT NULL GROUP BY alarm_id) m ON m.id = e.id
       JOIN alarms a ON a.id = e.alarm_id LEFT JOIN users u ON u.id = e.user_id
      WHERE e.to_state IN ('shelved', 'out-of-service')`,
    [ctx.tenantId, ids, new Date(end)],
  );
  const outOfNormal: HandoverOutOfNormal[] = last
    .map((e) => ({
      alarmId: Number(e.alarm_id),
      loopTag: tagOf.get(Number(e.loop_id)) ?? `#${e.loop_id}`,
      condition: e.condition,
      state: e.to_state as HandoverOutOfNormal["state"],
      reason: e.comment,
      by: e.name,
      at: ms(e.at),
    }))
    .sort((a, b) => a.loopTag.localeCompare(b.loopTag) || a.alarmId - b.alarmId);

  const before = await q<{ loop_id: number; t: number; tracker_state: string; radius: number | null }>(
    `SELECT p.loop_id, p.t, p.tracker_state, p.radius FROM pole_snapshots p
       JOIN (SELECT loop_id, MAX(t) AS t FROM pole_snapshots WHERE loop_id IN (?) AND t < ? GROUP BY loop_id) m
         ON m.loop_id = p.loop_id AND m.t = p.t`,
    [ids, start],
  );
  const during = await q<{ loop_id: number; t: number; tracker_state: string; radius: number | null }>(
    "SELECT loop_id, t, tracker_state, radius FROM pole_snapshots WHERE loop_id IN (?) AND t >= ? AND t < ? ORDER BY loop_id, t",
    [ids, start, end],
  );
  const startOf = new Map(before.map((b) => [Number(b.loop_id), b]));
  const track = new Map<number, { changes: number; last: { t: number; tracker_state: string; radius: number | null }; since: number }>();
  for (const b of before) track.set(Number(b.loop_id), { changes: 0, last: b, since: Number(b.t) });
  for (const s of during) {
    const id = Number(s.loop_id);
    const cur = track.get(id);
    if (!cur) track.set(id, { changes: 0, last: s, since: Number(s.t) });
    else if (cur.last.tracker_state !== s.tracker_state) track.set(id, { changes: cur.changes + 1, last: s, since: Number(s.t) });
    else cur.last = s;
  }
  const stateChanges: HandoverStateChange[] = [];
  const manualOrSaturated: HandoverManual[] = [];
  for (const [loopId, t] of track) {
    const s0 = startOf.get(loopId);
    const tag = tagOf.get(loopId) ?? `#${loopId}`;
    const v0 = verdictOf(s0?.radius);
    const v1 = verdictOf(t.last.radius);
    if (t.changes > 0 || !s0 || v0 !== v1) {
      if (!(t.changes === 0 && !s0 && v1 === "unknown")) {
        stateChanges.push({ loopId, loopTag: tag, stateAtStart: s0?.tracker_state ?? null, stateAtEnd: t.last.tracker_state, changes: t.changes, verdictAtStart: v0, verdictAtEnd: v1 });
      }
    }
    if (t.last.tracker_state === "manual" || t.last.tracker_state === "saturated") {
      manualOrSaturated.push({ loopId, loopTag: tag, state: t.last.tracker_state, since: t.since });
    }
  }
  stateChanges.sort((a, b) => a.loopTag.localeCompare(b.loopTag));
  manualOrSaturated.sort((a, b) => a.loopTag.localeCompare(b.loopTag));

  const notes = (await listNotes(ctx, { siteId: site.siteId, from: start, to: end, limit: 2000 }, db)).reverse();
  const confirmations = await listConfirmations(ctx, site.siteId, start, db);
  return {
    tenantName: ctx.tenantName,
    site,
    shift,
    asOf: end,
    inProgress: end < shift.end,
    generatedAt: now,
    activeAlarms,
    outOfNormal,
    stateChanges,
    manualOrSaturated,
    notes,
    kpis: computeAlarmKpis(occ, start, end),
    confirmations,
  };
}

export async function listConfirmations(ctx: { tenantId: number }, siteId: number, shiftStart: number, db: Sequelize = getSequelize()) {
  const rows = await db.query<{ user_id: number; user_name: string; at: Date }>(
    "SELECT user_id, user_name, at FROM handover_confirmations WHERE tenant_id = ? AND site_id = ? AND shift_start = ? ORDER BY at",
    { replacements: [ctx.tenantId, siteId, new Date(shiftStart)], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({ userId: Number(r.user_id), userName: r.user_name, at: ms(r.at) }));
}

/** Record that the caller read the handover; a second confirmation keeps the first (idempotent). */
export async function confirmHandover(
  ctx: { tenantId: number; userId: number; name: string },
  site: SiteShiftInfo,
  shift: Shift,
  now: number = Date.now(),
  db: Sequelize = getSequelize(),
): Promise<{ userId: number; userName: string; at: number }> {
  await db.query(
    `INSERT IGNORE INTO handover_confirmations (tenant_id, site_id, shift_start, shift_end, user_id, user_name, at) VALUES (?,?,?,?,?,?,?)`,
    { replacements: [ctx.tenantId, site.siteId, new Date(shift.start), new Date(shift.end), ctx.userId, ctx.name, new Date(now)], type: QueryTypes.INSERT },
  );
  const mine = (await listConfirmations(ctx, site.siteId, shift.start, db)).find((c) => c.userId === ctx.userId);
  if (!mine) throw new Error("The confirmation just written could not be read back.");
  return mine;
}
