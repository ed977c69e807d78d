/**
 * A loop's timeline: alarm events (activations, acknowledgements, shelving, service changes),
 * operator notes on the loop and its alarms, configuration and tuning changes, and tracker-state
 * changes (from pole_snapshots, which the history writer stores on every state change), merged
 * newest first. The caller has already found the loop through the tenancy guard.
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { getSequelize } from "@/lib/db/sequelize";
import { listNotes } from "./notes";

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
  db: Sequelize = getSequelize(),
): Promise<TimelineItem[]> {
  const items: TimelineItem[] = [];
  const range = [new Date(from), new Date(to)];

  const events = await db.query<{ id: number; alarm_id: number; at: Date; kind: string; to_state: string | null; comment: string | null; condition: string; name: string | null }>(
    `SELECT e.id, e.alarm_id, e.at, e.kind, e.to_state, e.comment, a.\`condition\`, u.name
       FROM alarm_events e JOIN alarms a ON a.id = e.alarm_id LEFT JOIN users u ON u.id = e.user_id
      WHERE e.loop_id = ? AND e.tenant_id = ? AND e.at >= ? AND e.at < ? ORDER BY e.at DESC LIMIT ${limit}`,
    { replacements: [loopId, ctx.tenantId, ...range], type: QueryTypes.SELECT },
  );
  for (const e of events) {
    items.push({
      kind: "alarm",
      at: new Date(e.at).getTime(),
      title: `${e.condition} alarm ${ACTION_WORDS[e.kind] ?? e.kind}${e.to_state ? ` (${e.to_state})` : ""}`,
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

  const changes = await db.query<{ id: number; at: Date; diff: unknown; reason: string | null; moc_reference: string | null; name: string | null }>(
    `SELECT c.id, c.at, c.diff, c.reason, c.moc_reference, u.name FROM config_changes c LEFT JOIN users u ON u.id = c.user_id
      WHERE c.tenant_id = ? AND c.entity = 'loop' AND c.entity_id = ? AND c.at >= ? AND c.at < ? ORDER BY c.at DESC LIMIT ${limit}`,
    { replacements: [ctx.tenantId, loopId, ...range], type: QueryTypes.SELECT },
  );
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
  const snaps = await db.query<{ t: number; tracker_state: string }>(
    `(SELECT t, tracker_state FROM pole_snapshots WHERE loop_id = ? AND t < ? ORDER BY t DESC LIMIT 1)
     UNION ALL (SELECT t, tracker_state FROM pole_snapshots WHERE loop_id = ? AND t >= ? AND t < ? ORDER BY t)`,
    { replacements: [loopId, from, loopId, from, to], type: QueryTypes.SELECT },
  );
  let prev: string | null = null;
  for (const s of snaps.sort((a, b) => Number(a.t) - Number(b.t))) {
    if (prev !== null && s.tracker_state !== prev && Number(s.t) >= from) {
      items.push({ kind: "state", at: Number(s.t), title: `tracker state ${prev} -> ${s.tracker_state}`, detail: null, who: null, refId: null });
    }
    prev = s.tracker_state;
  }

  return items.sort((a, b) => b.at - a.at).slice(0, limit);
}
