/**
 * Drains journal entries into MariaDB strictly in order, one transaction per entry: the event
 * row (append-only, unique journal id: a replay is a no-op), the alarm point row (only moved
 * forward: `journal_seq < seq`), and the occurrence row for the KPIs. When the database is away
 * the queue waits and is retried; nothing is dropped and the order is kept.
 */
import { QueryTypes, type Sequelize, type Transaction } from "sequelize";
import { roleAtLeast, ROLES, type Role } from "@/lib/domain/types";
import type { JournalEntry } from "@/lib/domain/alarms/journal-entry";

export const journalId = (seq: number) => String(seq).padStart(16, "0");

/** `data.authorisation` of a person's action accepted from the last-known membership (database unreachable). */
export const LAST_KNOWN_MEMBERSHIP = "last-known-membership";
export interface LastKnownAuthorisation {
  authorisation: typeof LAST_KNOWN_MEMBERSHIP;
  membershipAsOf: string;
  role: Role;
  requiredRole: Role;
  /** Added when written: the membership as the database says then ("revoked" = removed, user disabled or role too low now). */
  membershipOnReplay?: "confirmed" | "revoked";
}

const d = (ms: number | null) => (ms == null ? null : new Date(ms));
const clip = (s: string | null, n: number) => (s == null ? null : s.length > n ? s.slice(0, n - 1) + "…" : s);

export interface DbWriterOptions {
  /** Called after a successful drain left the queue empty. */
  onDrained?: () => void;
  /** Wait before retrying after a database error (real time). */
  retryMs?: number;
  log?: (msg: string) => void;
}

export class AlarmDbWriter {
  private queue: JournalEntry[] = [];
  private running: Promise<void> | null = null;
  private retryTimer: NodeJS.Timeout | null = null;
  private stopped = false;
  durableSeq = 0;
  lastError: string | null = null;
  failingSince: number | null = null;
  written = 0;

  constructor(
    private sequelize: Sequelize,
    private opts: DbWriterOptions = {},
  ) {}

  get pending(): readonly JournalEntry[] {
    return this.queue;
  }

  enqueue(e: JournalEntry): void {
    this.queue.push(e);
    this.kick();
  }

  /** Start draining unless a drain is already running or waiting for its retry. */
  kick(): void {
    if (this.running || this.retryTimer || this.stopped) return;
    this.running = this.drain().finally(() => {
      this.running = null;
    });
  }

  /** Try to write everything now; resolves when the queue is empty, rejects with the DB error otherwise. */
  async flush(): Promise<void> {
    if (this.retryTimer) {
      clearTimeout(this.retryTimer);
      this.retryTimer = null;
    }
    if (this.running) await this.running;
    if (this.queue.length === 0) return;
    this.running = this.drain().finally(() => {
      this.running = null;
    });
    await this.running;
    if (this.queue.length > 0) throw new Error(this.lastError ?? "alarm events not yet written");
  }

  stop(): void {
    this.stopped = true;
    if (this.retryTimer) clearTimeout(this.retryTimer);
    this.retryTimer = null;
  }

  private async drain(): Promise<void> {
    while (this.queue.length > 0) {
      const e = this.queue[0] as JournalEntry;
      try {
        await this.sequelize.transaction((t) => this.write(e, t));
      } catch (err) {
        const msg = err instanceof Error ? err.message : String(err);
        if (this.lastError !== msg) this.opts.log?.(`[alarms] database write failed, ${this.queue.length} transition(s) held in order: ${msg}`);
        this.lastError = msg;
        this.failingSince ??= Date.now();
        if (!this.stopped) {
          this.retryTimer = setTimeout(() => {
            this.retryTimer = null;
            this.kick();
          }, this.opts.retryMs ?? 1000);
          this.retryTimer.unref?.();
        }
        return;
      }
      this.queue.shift();
      this.durableSeq = Math.max(this.durableSeq, e.seq);
      this.written++;
      if (this.lastError) this.opts.log?.("[alarms] database writes resumed");
      this.lastError = null;
      this.failingSince = null;
    }
    this.opts.onDrained?.();
  }

  /**
   * An action accepted during an outage on the last-known membership: is the person still a
   * member with the role it needed? If not, the event is flagged (and logged) for review; the
   * action itself stands, as it did for the alarm and the people who saw it.
   */
  private async recheckMembership(e: JournalEntry, q: (sql: string, r: unknown[], t?: QueryTypes) => Promise<unknown>): Promise<Record<string, unknown>> {
    const auth = e.data as unknown as LastKnownAuthorisation;
    const rows = (await q(
      "SELECT m.role, u.disabled FROM memberships m JOIN users u ON u.id = m.user_id WHERE m.user_id = ? AND m.tenant_id = ?",
      [e.userId, e.tenantId],
      QueryTypes.SELECT,
    )) as { role: string; disabled: number | boolean }[];
    const row = rows[0];
    const role = row && (ROLES as readonly string[]).includes(row.role) ? (row.role as Role) : null;
    const ok = row != null && !Number(row.disabled) && role != null && roleAtLeast(role, auth.requiredRole);
    if (!ok)
      this.opts.log?.(
        `[alarms] ${e.kind} of alarm ${e.alarmId} by user ${e.userId} was accepted during a database outage on the membership known at ${auth.membershipAsOf}, which has been revoked since: flagged for review`,
      );
    return { ...auth, membershipOnReplay: ok ? "confirmed" : "revoked" };
  }

  private async write(e: JournalEntry, transaction: Transaction): Promise<void> {
    const q = (sql: string, replacements: unknown[], type: QueryTypes = QueryTypes.RAW) =>
      this.sequelize.query(sql, { replacements, transaction, type });
    const jid = journalId(e.seq);
    const seen = (await q("SELECT id FROM alarm_events WHERE journal_id = ?", [jid], QueryTypes.SELECT)) as unknown[];
    if (seen.length > 0) return;
    const p = e.point;
    const data = e.data?.authorisation === LAST_KNOWN_MEMBERSHIP ? await this.recheckMembership(e, q) : e.data;
    await q(
      "INSERT INTO alarm_events (tenant_id, alarm_id, loop_id, journal_id, at, kind, from_state, to_state, user_id, comment, data) VALUES (?,?,?,?,?,?,?,?,?,?,?)",
      [e.tenantId, e.alarmId, e.loopId, jid, d(e.at), e.kind, e.from, e.to, e.userId, e.comment, JSON.stringify({ ...(data ?? {}), announce: e.announce, priority: p.priority, active: p.active, value: p.value, level: p.level, message: p.message })],
    );
    const ack = e.kind === "acknowledge";
    await q(
      `UPDATE alarms SET state = ?, active = ?, priority = ?, shelved_until = ?, shelve_reason = ?, shelved_by = IF(? = 'shelved', COALESCE(?, shelved_by), NULL),
        suppressed_reason = ?, out_of_service_reason = ?, value = ?, level = ?, message = ?, activated_at = ?,
        occurrence_open = ?, changed_at = ?, journal_seq = ?, version = version + 1, updated_at = ?
        ${ack ? ", acknowledged_at = ?, acknowledged_by = ?" : ""}
       WHERE id = ? AND journal_seq < ?`,
      [
        p.state,
        p.active,
        p.priority,
        d(p.shelvedUntil),
        clip(p.shelveReason, 1000),
        p.state,
        e.kind === "shelve" ? e.userId : null,
        clip(p.suppressedReason, 500),
        clip(p.outOfServiceReason, 500),
        Number.isFinite(p.value) ? p.value : null,
        Number.isFinite(p.level) ? p.level : null,
        clip(p.message, 500) ?? "",
        d(p.activatedAt),
        p.occurrenceOpen,
        d(p.changedAt),
        e.seq,
        new Date(),
        ...(ack ? [d(e.at), e.userId] : []),
        e.alarmId,
        e.seq,
      ].map((v) => (v === undefined ? null : v)),
    );
    if (e.occurrence === "start") {
      await q(
        "INSERT INTO alarm_occurrences (alarm_id, tenant_id, loop_id, area_id, `condition`, priority, started_at) VALUES (?,?,?,?,?,?,?)",
        [e.alarmId, e.tenantId, e.loopId, e.areaId, e.condition, p.priority, d(e.at)],
      );
    } else if (e.occurrence === "end") {
      await q("UPDATE alarm_occurrences SET ended_at = ? WHERE alarm_id = ? AND ended_at IS NULL", [d(e.at), e.alarmId]);
    }
    if (ack) {
      await q(
        "UPDATE alarm_occurrences SET acknowledged_at = ? WHERE alarm_id = ? AND acknowledged_at IS NULL ORDER BY id DESC LIMIT 1",
        [d(e.at), e.alarmId],
      );
    }
  }
}
