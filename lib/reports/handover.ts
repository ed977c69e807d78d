/**
 * The shift handover of a site, or of one of its areas: what the incoming shift must know, as of
 * the end of the outgoing shift. Every figure is read as it stood at the shift's end (alarm
 * occurrences, the alarm event log, tracker-state snapshots), so a handover read a week later says
 * the same. An area's handover holds that area's loops, alarms and notes and the site's shift notes
 * without an area. SQL in lib/data/reports-handover.ts; plain typed objects out.
 */
import type { Sequelize } from "sequelize";
import {
  handoverLoops,
  handoverOccurrences,
  insertConfirmation,
  listConfirmations,
  outOfNormalAt,
  siteAreaName,
  siteShiftRow,
  snapshotsBefore,
  snapshotsDuring,
  workItemsOpened,
} from "@/lib/data/reports-handover";
import { computeAlarmKpis, type AlarmKpis, type OccurrenceRecord } from "@/lib/domain/alarms/kpis";
import { NotFoundError, ValidationError } from "@/lib/domain/errors";
import { assertSiteVisible } from "@/lib/data/tenancy";
import type { AlarmPriority } from "@/lib/domain/types";
import { listNotes, type NoteDto } from "./notes";

export { listConfirmations };
import { lastEndedShift, parseShiftStarts, shiftAt, type Shift } from "./shifts";

export interface SiteShiftInfo {
  siteId: number;
  siteName: string;
  timeZone: string;
  shiftStarts: number[];
  /** The area the handover is for (null or absent: the whole site). */
  areaId?: number | null;
  areaName?: string | null;
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

/** A work-list item a routine-data finding opened during the shift (engineering work, not an alarm). */
export interface HandoverWorkItem {
  itemId: number;
  loopTag: string;
  label: string;
  confidence: number;
  openedAt: number;
  /** The finding's first evidence line ("likely sticking valve: ..."). */
  evidence: string | null;
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
  workItems: HandoverWorkItem[];
  notes: NoteDto[];
  kpis: AlarmKpis;
  confirmations: { userId: number; userName: string; at: number }[];
}

const PRIORITY_ORDER: Record<AlarmPriority, number> = { urgent: 0, high: 1, low: 2 };
const ms = (d: unknown) => new Date(d as Date).getTime();

/** The site's zone and shift starts, tenant-checked (404 for another tenant's site). */
export async function siteShiftInfo(
  ctx: { tenantId: number; siteIds?: number[] | null },
  siteId: number,
  areaId?: number | null,
  db?: Sequelize,
): Promise<SiteShiftInfo> {
  assertSiteVisible(ctx, siteId, "Site");
  const s = await siteShiftRow(ctx.tenantId, siteId, db);
  if (!s) throw new NotFoundError("Site");
  const info: SiteShiftInfo = { siteId: Number(s.id), siteName: s.name, timeZone: s.time_zone, shiftStarts: parseShiftStarts(s.shift_starts) };
  if (areaId == null) return info;
  const areaName = await siteAreaName(ctx.tenantId, siteId, areaId, db);
  if (areaName === undefined) throw new NotFoundError("Area");
  return { ...info, areaId, areaName };
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
  db?: Sequelize,
): Promise<Handover> {
  const { start } = shift;
  const end = Math.min(shift.end, now);
  const areaId = site.areaId ?? null;
  const loops = await handoverLoops(ctx.tenantId, site.siteId, areaId, db);
  const tagOf = new Map(loops.map((l) => [Number(l.id), l.tag]));
  const ids = loops.map((l) => Number(l.id));

  const occRows = await handoverOccurrences(ctx.tenantId, ids, start, end, db);
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

  const last = await outOfNormalAt(ctx.tenantId, ids, end, db);
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

  const before = await snapshotsBefore(ids, start, db);
  const during = await snapshotsDuring(ids, start, end, db);
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

  const workItems: HandoverWorkItem[] = (await workItemsOpened(ctx.tenantId, ids, start, end, db)).map((w) => {
    const ev = typeof w.evidence === "string" ? (JSON.parse(w.evidence) as unknown) : w.evidence;
    const first = Array.isArray(ev) && typeof ev[0] === "string" ? ev[0] : null;
    return { itemId: Number(w.id), loopTag: tagOf.get(Number(w.loop_id)) ?? `#${w.loop_id}`, label: w.label, confidence: Number(w.confidence), openedAt: ms(w.opened_at), evidence: first };
  });

  const noteFilter = areaId === null ? {} : { areaOrSiteWide: areaId };
  const notes = (await listNotes(ctx, { siteId: site.siteId, ...noteFilter, from: start, to: end, limit: 2000 }, db)).reverse();
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
    workItems,
    notes,
    kpis: computeAlarmKpis(occ, start, end),
    confirmations,
  };
}

/** Record that the caller read the handover; a second confirmation keeps the first (idempotent). */
export async function confirmHandover(
  ctx: { tenantId: number; userId: number; name: string },
  site: SiteShiftInfo,
  shift: Shift,
  now: number = Date.now(),
  db?: Sequelize,
): Promise<{ userId: number; userName: string; at: number }> {
  await insertConfirmation({ tenantId: ctx.tenantId, siteId: site.siteId, shiftStart: shift.start, shiftEnd: shift.end, userId: ctx.userId, userName: ctx.name, at: now }, db);
  const mine = (await listConfirmations(ctx, site.siteId, shift.start, db)).find((c) => c.userId === ctx.userId);
  if (!mine) throw new Error("The confirmation just written could not be read back.");
  return mine;
}
