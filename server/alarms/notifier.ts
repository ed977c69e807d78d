/**
 * Alarm notifications by e-mail. Rules per tenant and operator area (recipients, minimum
 * priority, escalation delay while still unacknowledged, repeat interval). Repeats of the same
 * loop's alarms to one rule are rate-limited to one per repeat interval, but a higher priority
 * than the last message and an escalation always send. Every message links to the alarm.
 */
import { PRIORITY_RANK } from "@/lib/domain/alarms/state-machine";
import type { AlarmDto, AlarmPriority } from "@/lib/domain/types";
import type { Clock } from "@/server/context";
import type { MailMessage } from "@/server/mail";

import type { NotificationRuleRow, SentRow } from "@/lib/data/alarms/store";

export interface NotifierDeps {
  clock: Clock;
  rules(tenantId: number): Promise<NotificationRuleRow[]>;
  send(msg: MailMessage): Promise<{ messageId: string }>;
  record(rows: SentRow[]): Promise<void>;
  /** The alarm as it is now (to check it is still unacknowledged when an escalation is due). */
  current(alarmId: number): AlarmDto | null;
  link(alarmId: number): string;
  log?: (msg: string) => void;
}

/** Used when a rule sets no repeat interval. */
export const DEFAULT_REPEAT_MINUTES = 15;

const CAUTION =
  "Rimguard is advisory monitoring, not a safety system; it never writes to a controller. Any change to a live controller follows the site's management of change; local codes and licensed practice prevail.";

export class AlarmNotifier {
  private last = new Map<string, { at: number; rank: number }>();
  private escalations = new Map<string, { cancel(): void }>();
  private inflight = new Set<Promise<void>>();

  constructor(private deps: NotifierDeps) {}

  /** An alarm was put in front of the operator (new, re-announced or escalated in priority). */
  announce(alarm: AlarmDto, areaId: number | null): void {
    this.track(this.handleAnnounce(alarm, areaId));
  }

  /** After a restart: remember the last message per rule and loop (for the repeat interval). */
  rememberSent(ruleId: number, loopId: number, at: number, priority: AlarmPriority): void {
    const key = `${ruleId}:${loopId}`;
    const prev = this.last.get(key);
    if (!prev || prev.at < at) this.last.set(key, { at, rank: PRIORITY_RANK[priority] });
  }

  /**
   * After a restart: re-arm the escalations of an alarm that is still unacknowledged, counted
   * from `announcedAt` (epoch ms); `alreadyEscalated(ruleId)` says whether that rule's
   * escalation was sent before the restart.
   */
  async resume(alarm: AlarmDto, areaId: number | null, announcedAt: number, alreadyEscalated: (ruleId: number) => Promise<boolean>): Promise<void> {
    const rules = (await this.deps.rules(alarm.tenantId)).filter(
      (r) => r.escalationMinutes != null && (r.areaId == null || r.areaId === areaId) && PRIORITY_RANK[alarm.priority] >= PRIORITY_RANK[r.minPriority],
    );
    for (const rule of rules) {
      if (await alreadyEscalated(rule.id)) continue;
      const wait = Math.max(0, announcedAt + (rule.escalationMinutes as number) * 60_000 - this.deps.clock.now());
      this.scheduleEscalation(rule, alarm, wait);
    }
  }

  /** The alarm no longer needs anyone (acknowledged, cleared and acknowledged, shelved, ...). */
  settle(alarmId: number): void {
    for (const [key, t] of this.escalations) {
      if (key.startsWith(`${alarmId}:`)) {
        t.cancel();
        this.escalations.delete(key);
      }
    }
  }

  /** Wait for messages already being sent (tests, shutdown). */
  async idle(): Promise<void> {
    while (this.inflight.size > 0) await Promise.allSettled([...this.inflight]);
  }

  stop(): void {
    for (const t of this.escalations.values()) t.cancel();
    this.escalations.clear();
  }

  private track(p: Promise<void>): void {
    const q = p.catch((err) => this.deps.log?.(`[alarms] notification failed: ${err instanceof Error ? err.message : String(err)}`));
    this.inflight.add(q);
    void q.finally(() => this.inflight.delete(q));
  }

  private async handleAnnounce(alarm: AlarmDto, areaId: number | null): Promise<void> {
    const rules = (await this.deps.rules(alarm.tenantId)).filter(
      (r) => (r.areaId == null || r.areaId === areaId) && PRIORITY_RANK[alarm.priority] >= PRIORITY_RANK[r.minPriority],
    );
    const now = this.deps.clock.now();
    const rank = PRIORITY_RANK[alarm.priority];
    for (const rule of rules) {
      const key = `${rule.id}:${alarm.loopId}`;
      const prev = this.last.get(key);
      const repeatMs = (rule.repeatMinutes ?? DEFAULT_REPEAT_MINUTES) * 60_000;
      const limited = prev !== undefined && now - prev.at < repeatMs && rank <= prev.rank;
      if (limited) {
        await this.deps.record(rule.recipients.map((r) => this.row(rule, alarm, r, "initial", subjectOf(alarm, "initial"), "rate-limited", null, null, now)));
      } else {
        this.last.set(key, { at: now, rank });
        await this.deliver(rule, alarm, "initial");
      }
      if (rule.escalationMinutes != null) this.scheduleEscalation(rule, alarm);
    }
  }

  private scheduleEscalation(rule: NotificationRuleRow, alarm: AlarmDto, waitMs = (rule.escalationMinutes as number) * 60_000): void {
    const key = `${alarm.id}:${rule.id}`;
    this.escalations.get(key)?.cancel();
    const activation = alarm.activatedAt;
    const handle = this.deps.clock.setTimeout(() => {
      this.escalations.delete(key);
      const now = this.deps.current(alarm.id);
      // Escalate only the same activation, still unacknowledged.
      if (!now || now.state !== "unacknowledged" || now.activatedAt !== activation) return;
      this.track(this.deliver(rule, now, "escalation"));
    }, waitMs);
    this.escalations.set(key, handle);
  }

  private async deliver(rule: NotificationRuleRow, alarm: AlarmDto, kind: "initial" | "escalation"): Promise<void> {
    const subject = subjectOf(alarm, kind);
    const text = bodyOf(alarm, kind, this.deps.link(alarm.id), rule);
    const at = this.deps.clock.now();
    let messageId: string | null = null;
    let error: string | null = null;
    try {
      messageId = (
        await this.deps.send({
          to: rule.recipients,
          subject,
          text,
          headers: { "X-Rimguard-Tenant": String(alarm.tenantId), "X-Rimguard-Alarm": String(alarm.id), "X-Rimguard-Kind": kind },
        })
      ).messageId;
    } catch (err) {
      error = err instanceof Error ? err.message : String(err);
    }
    await this.deps.record(rule.recipients.map((r) => this.row(rule, alarm, r, kind, subject, error ? "failed" : "sent", messageId, error, at)));
  }

  private row(rule: NotificationRuleRow, alarm: AlarmDto, recipient: string, kind: SentRow["kind"], subject: string, status: SentRow["status"], messageId: string | null, error: string | null, at: number): SentRow {
    return { tenantId: alarm.tenantId, ruleId: rule.id, alarmId: alarm.id, recipient, kind, subject, status, messageId, error, sentAt: at };
  }
}

const PRIORITY_WORD: Record<AlarmPriority, string> = { urgent: "URGENT (1)", high: "HIGH (2)", low: "LOW (3)" };

/** The priority a subject written by `subjectOf` names (for restoring the repeat limits). */
export function priorityOfSubject(subject: string): AlarmPriority | null {
  for (const [p, w] of Object.entries(PRIORITY_WORD) as [AlarmPriority, string][]) if (subject.includes(w)) return p;
  return null;
}

export function subjectOf(alarm: AlarmDto, kind: "initial" | "escalation"): string {
  return `[Rimguard] ${kind === "escalation" ? "ESCALATION - still unacknowledged - " : ""}${PRIORITY_WORD[alarm.priority]} ${alarm.condition} on ${alarm.loopTag}`;
}

function bodyOf(alarm: AlarmDto, kind: "initial" | "escalation", link: string, rule: NotificationRuleRow): string {
  return [
    kind === "escalation"
      ? `This alarm is still unacknowledged after ${rule.escalationMinutes} minutes.`
      : `A ${alarm.priority} alarm needs attention.`,
    "",
    `Loop:      ${alarm.loopTag}`,
    `Condition: ${alarm.condition}`,
    `Priority:  ${alarm.priority}`,
    `State:     ${alarm.state}`,
    `Since:     ${alarm.activatedAt ?? alarm.changedAt}`,
    `Detail:    ${alarm.message}`,
    "",
    `Open the alarm: ${link}`,
    "",
    `Sent under the notification rule "${rule.name}".`,
    CAUTION,
  ].join("\n");
}
