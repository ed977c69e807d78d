/**
 * A loop's timeline: alarm events (activations, acknowledgements, shelving, service changes),
 * operator notes on the loop and its alarms, configuration and tuning changes, and tracker-state
 * changes (from pole_snapshots, which the history writer stores on every state change), merged
 * newest first. The caller has already found the loop through the tenancy guard. SQL in
 * lib/data/reports-log.ts.
 */
import type { Sequelize } from "sequelize";
import { timelineAlarmEvents, timelineConfigChanges, timelineSnapshots } from "@/lib/data/reports-log";
import { listNotes } from "./notes";
import { RETIRED_ALARM_CONDITIONS } from "@/lib/domain/types";

export type TimelineKind = "alarm" | "note" | "config" | "state";

export interface TimelineItem {
  kind: TimelineKind;
  /** Epoch ms. */
  at: number;
  /** One line, e.g. "margin alarm acknowledged" or "tracker state tracking -> manual". */
  title: string;
  detail: string | null;
  who: string | null;
  /** Alarm id, note id or config-change id, when there is one. */
  refId: number | null;
  /** How many identical rows this one stands for (collapsed repeats; absent = 1). */
  repeats?: number;
  /** Epoch ms of the earliest of the collapsed rows. */
  firstAt?: number;
}

/**
 * Collapse repeats (input newest first): an alarm row whose alarm's previous row (in time, other
 * kinds of rows between it allowed) has the same title stands for one more of that row — e.g.
 * "suppressed by design" written again each time the tracker state flickers. A row of that alarm
 * with another title ends the run.
 */
export function collapseRepeats(items: readonly TimelineItem[]): TimelineItem[] {
  const out: TimelineItem[] = [];
  /** alarm id -> the kept row its next (older) row would repeat. */
  const open = new Map<number, TimelineItem>();
  for (const it of items) {
    if (it.kind !== "alarm" || it.refId === null) {
      out.push(it);
      continue;
    }
    const prev = open.get(it.refId);
    if (prev && prev.title === it.title && (prev.detail ?? null) === (it.detail ?? null) && (prev.who ?? null) === (it.who ?? null)) {
      prev.repeats = (prev.repeats ?? 1) + 1;
      prev.firstAt = it.at;
      continue;
    }
    const kept = { ...it };
    open.set(it.refId, kept);
    out.push(kept);
  }
  return out;
}

const ACTION_WORDS: Record<string, string> = {
  activate: "raised",
  clear: "returned to normal",
  acknowledge: "acknowledged",
  shelve: "shelved",
  unshelve: "unshelved",
  "shelve-expired": "shelve expired",
  "remove-from-service": "removed from service",
  "return-to-service": "returned to service",
  suppress: "suppressed by design",
  unsuppress: "no longer suppressed",
  "set-priority": "priority set",
  retire: "retired (moved to the engineering work list)",
};

function describeDiff(diff: unknown): string {
  if (!diff || typeof diff !== "object") return "";
  return Object.entries(diff as Record<string, { from?: unknown; to?: unknown }>)
    .map(([k, v]) => `${k}: ${JSON.stringify(v?.from ?? null)} -> ${JSON.stringify(v?.to ?? null)}`)
    .join("; ");
}

/** The loop's timeline in [from, to), newest first, at most `limit` items. */
export async function loopTimeline(
  ctx: { tenantId: number },
  loopId: number,
  from: number,
  to: number,
  limit = 500,
  db?: Sequelize,
): Promise<TimelineItem[]> {
  const items: TimelineItem[] = [];
  const events = await timelineAlarmEvents(ctx.tenantId, loopId, from, to, limit, db);
  for (const e of events) {
    items.push({
      kind: "alarm",
      at: new Date(e.at).getTime(),
      title: `${e.condition}${(RETIRED_ALARM_CONDITIONS as readonly string[]).includes(e.condition) ? " (retired condition)" : ""} alarm ${ACTION_WORDS[e.kind] ?? e.kind}${e.to_state ? ` (${e.to_state})` : ""}`,
      detail: e.comment,
      who: e.name,
      refId: Number(e.alarm_id),
    });
  }

  for (const n of await listNotes(ctx, { loopId, from, to, limit }, db)) {
    items.push({
      kind: "note",
      at: n.at,
      title: n.correctsId ? `note (corrects note ${n.correctsId})` : n.alarmId ? "note on an alarm" : "note",
      detail: n.text,
      who: n.authorName,
      refId: n.id,
    });
  }

  const changes = await timelineConfigChanges(ctx.tenantId, loopId, from, to, limit, db);
  for (const c of changes) {
    const diff = typeof c.diff === "string" ? (JSON.parse(c.diff) as unknown) : c.diff;
    const text = describeDiff(diff);
    items.push({
      kind: "config",
      at: new Date(c.at).getTime(),
      title: /gain|ti|td|tf|form|action/i.test(Object.keys((diff as object) ?? {}).join(" ")) ? "tuning changed" : "configuration changed",
      detail: [text, c.reason ? `reason: ${c.reason}` : "", c.moc_reference ? `MOC ${c.moc_reference}` : ""].filter(Boolean).join(" · ") || null,
      who: c.name,
      refId: Number(c.id),
    });
  }

  // State changes: the snapshot before the window gives the state the window starts in.
  const snaps = await timelineSnapshots(loopId, from, to, db);
  let prev: string | null = null;
  for (const s of snaps.sort((a, b) => Number(a.t) - Number(b.t))) {
    if (prev !== null && s.tracker_state !== prev && Number(s.t) >= from) {
      items.push({ kind: "state", at: Number(s.t), title: `tracker state ${prev} -> ${s.tracker_state}`, detail: null, who: null, refId: null });
    }
    prev = s.tracker_state;
  }

  return collapseRepeats(items.sort((a, b) => b.at - a.at)).slice(0, limit);
}
