/**
 * Actions: every transition of an alarm point, whether a condition's or a person's, is made
 * durable and announced here in one order: append to the fsync'd journal -> announce (bus,
 * Socket.IO tenant room, notifications) -> queue for MariaDB. Person actions check the role, the
 * tenant and the journal's room first; shelving arms a timer that un-shelves at expiry.
 */
import { HttpError, ForbiddenError, NotFoundError } from "@/lib/domain/errors";
import { applyAlarmAction, type AlarmAction, type TransitionResult } from "@/lib/domain/alarms/state-machine";
import { tenantRoom } from "@/lib/domain/events";
import { roleAtLeast, type AlarmDto, type Role, type TenantContext } from "@/lib/domain/types";
import { LAST_KNOWN_MEMBERSHIP, type LastKnownAuthorisation } from "@/lib/data/alarms/db-writer";
import type { JournalEntry, PointSnapshot } from "./journal";
import { toDto, type AlarmCore, type PointRecord } from "./store";

export class JournalFullHttpError extends HttpError {
  constructor() {
    super(
      503,
      "Alarm actions are paused: the alarm journal is full because the database has not taken the backlog yet. Nothing has been lost; try again when the database is back.",
    );
  }
}

/** Journal, announce and queue one transition; returns the point as it now is. */
export function commit(
  core: AlarmCore,
  rec: PointRecord,
  action: AlarmAction,
  r: TransitionResult,
  userId: number | null,
  comment: string | null,
  data: Record<string, unknown> | null = null,
): AlarmDto {
  const loop = core.loops.get(rec.loopId);
  const point: PointSnapshot = { ...rec.point, ...r.point };
  const entry: JournalEntry = {
    seq: core.seq + 1,
    at: r.point.changedAt,
    tenantId: rec.tenantId,
    alarmId: rec.id,
    loopId: rec.loopId,
    areaId: loop?.areaId ?? null,
    condition: rec.condition,
    kind: action.kind,
    from: r.from,
    to: r.to,
    userId,
    comment,
    announce: r.announce,
    occurrence: r.occurrence,
    point,
    data,
  };
  if (core.journal.fits(Buffer.byteLength(JSON.stringify(entry)) + 1) && core.overflow === 0) {
    core.journal.append(entry);
  } else {
    // Journal full: keep the transition in memory, in order, for the database (health: critical).
    core.overflow++;
    core.unjournalled.add(entry.seq);
  }
  core.seq = entry.seq;
  rec.point = point;
  rec.seq = entry.seq;
  const dto = toDto(core, rec);
  core.ctx.bus.emit("alarm:changed", dto);
  core.ctx.io?.to(tenantRoom(rec.tenantId)).emit("alarm:changed", dto);
  core.writer.enqueue(entry);
  syncShelveTimer(core, rec);
  if (r.announce) core.notifier.announce(dto, loop?.areaId ?? null);
  else if (r.to !== "unacknowledged") core.notifier.settle(rec.id);
  return dto;
}

/** Arm (or cancel) the timer that ends a point's shelving. */
export function syncShelveTimer(core: AlarmCore, rec: PointRecord): void {
  core.shelveTimers.get(rec.id)?.cancel();
  core.shelveTimers.delete(rec.id);
  const until = rec.point.state === "shelved" ? rec.point.shelvedUntil : null;
  if (until == null) return;
  const fire = () => {
    core.shelveTimers.delete(rec.id);
    const r = applyAlarmAction(rec.point, { kind: "shelve-expired" }, core.ctx.clock.now());
    if (r) commit(core, rec, { kind: "shelve-expired" }, r, null, "shelve expired");
  };
  const wait = until - core.ctx.clock.now();
  if (wait <= 0) queueMicrotask(fire);
  else core.shelveTimers.set(rec.id, core.ctx.clock.setTimeout(fire, wait));
}

function owned(core: AlarmCore, user: TenantContext, alarmId: number, min: Role): PointRecord {
  if (!roleAtLeast(user.role, min)) throw new ForbiddenError(`This needs the ${min} role or higher; you are ${user.role}.`);
  const rec = core.points.get(alarmId);
  if (!rec || rec.tenantId !== user.tenantId) throw new NotFoundError("Alarm");
  if (core.overflow > 0 || !core.journal.fits()) throw new JournalFullHttpError();
  return rec;
}

/** A person's action on one alarm: role, tenant and journal room checked, then committed. */
export function personAction(core: AlarmCore, user: TenantContext, alarmId: number, min: Role, action: AlarmAction, comment: string | null): AlarmDto {
  const rec = owned(core, user, alarmId, min);
  let r: TransitionResult | null;
  try {
    r = applyAlarmAction(rec.point, action, core.ctx.clock.now());
  } catch (err) {
    if (err instanceof HttpError && err.status === 409)
      core.log(`[alarms] refused: user ${user.userId} tried to ${action.kind} alarm ${alarmId} (${rec.point.state}): ${err.message}`);
    throw err;
  }
  if (!r) return toDto(core, rec);
  // Authorised from the last-known membership (database unreachable): say so in the journal;
  // the writer checks the membership again when the database is back (lib/data/alarms/db-writer.ts).
  const data: LastKnownAuthorisation | null =
    user.membershipAsOf == null
      ? null
      : { authorisation: LAST_KNOWN_MEMBERSHIP, membershipAsOf: new Date(user.membershipAsOf).toISOString(), role: user.role, requiredRole: min };
  return commit(core, rec, action, r, user.userId, comment, data as Record<string, unknown> | null);
}
