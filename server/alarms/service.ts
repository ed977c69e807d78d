/**
 * The alarm service: evaluates every tracker update against the loop's effective policy, drives
 * each alarm point through the ISA-18.2 state model (lib/domain/alarms), and makes every
 * transition durable in this order: append to the fsync'd journal -> announce (bus + Socket.IO
 * tenant room, notifications) -> write to MariaDB (in order, replayed after an outage).
 * Its parts: the in-memory store (store.ts), evaluation (evaluation.ts), transitions and person
 * actions (actions.ts); SQL lives in lib/data/alarms.
 *
 * When the journal is full (the database has been away long enough for the backlog to reach
 * ALARM_JOURNAL_MAX_BYTES), nothing is dropped: operator actions are refused with a 503 that
 * says why, while condition transitions are still applied, announced and queued in memory for the
 * database; health reports critical until the backlog is written. (Refusing operator actions
 * keeps every acknowledgement and shelve durable before it is confirmed to the person.)
 */
import type { Sequelize } from "sequelize";
import type { AlarmApi, AlarmListFilter } from "@/lib/domain/services";
export type { AlarmListFilter } from "@/lib/domain/services";
import type { EffectivePolicy, PolicyScope } from "@/lib/domain/alarms/policy";
import type { AlarmKpis } from "@/lib/domain/alarms/kpis";
import { publicOrigin } from "@/lib/config";
import { NotFoundError } from "@/lib/domain/errors";
import type { AlarmDto, LoopStateDto, TenantContext } from "@/lib/domain/types";
import { AlarmDbWriter, journalId } from "@/lib/data/alarms/db-writer";
import { alarmDetail, alarmKpis, readPolicy, writePolicy, type PolicyView } from "@/lib/data/alarms/queries";
import {
  escalationSentSince,
  readAlarmNotificationRules,
  readInitialNotificationsSince,
  recordNotificationsSent,
  type NotificationRuleRow,
  type SentRow,
} from "@/lib/data/alarms/store";
import type { ServerContext, Service, ServiceHealth } from "@/server/context";
import type { MailService } from "@/server/mail";
import { JournalFullHttpError, personAction, syncShelveTimer } from "./actions";
import { evaluateTrackerUpdate } from "./evaluation";
import { AlarmJournal, type JournalEntry } from "./journal";
import { AlarmNotifier, priorityOfSubject } from "./notifier";
import { listAlarms, loadLoops, loadPoints, loadPolicies, policyFor, policyLoops, replay, toDto, type AlarmCore, type LoopFacts, type PointRecord } from "./store";

export { JournalFullHttpError };

export interface AlarmServiceOptions {
  sequelize: Sequelize;
  journalPath?: string;
  journalMaxBytes?: number;
  /** Real-time wait before retrying the database after an error. */
  retryMs?: number;
  quiet?: boolean;
}

export class AlarmService implements Service, AlarmApi {
  readonly name = "alarms";
  readonly writer: AlarmDbWriter;
  readonly notifier: AlarmNotifier;
  private core: AlarmCore;
  private rulesCache = new Map<number, { at: number; rules: NotificationRuleRow[] }>();
  private unsubscribe: (() => void)[] = [];
  private refreshingLoops: Promise<void> | null = null;

  private constructor(
    private ctx: ServerContext,
    opts: AlarmServiceOptions,
    journal: AlarmJournal,
  ) {
    const log = opts.quiet ? () => {} : (m: string) => console.warn(m);
    this.writer = new AlarmDbWriter(opts.sequelize, {
      retryMs: opts.retryMs ?? 1000,
      log,
      onDrained: () => {
        if (this.writer.pending.length === 0) {
          this.core.journal.truncate();
          this.core.overflow = 0;
          this.core.unjournalled.clear();
        }
      },
    });
    this.notifier = new AlarmNotifier({
      clock: ctx.clock,
      rules: (tenantId) => this.rulesFor(tenantId),
      send: (msg) => {
        const mail = this.ctx.services.get("mail") as MailService | undefined;
        if (!mail) return Promise.reject(new Error("no mail service running"));
        return mail.send(msg);
      },
      record: (rows) => this.recordSent(rows),
      current: (id) => {
        const r = this.core.points.get(id);
        return r ? toDto(this.core, r) : null;
      },
      link: (id) => `${publicOrigin(ctx.config)}/alarms/${id}`,
      log,
    });
    this.core = {
      ctx,
      sequelize: opts.sequelize,
      journal,
      writer: this.writer,
      notifier: this.notifier,
      log,
      points: new Map(),
      byLoop: new Map(),
      loops: new Map(),
      memory: new Map(),
      evidenced: new Set(),
      lastState: new Map(),
      policyLayers: { tenant: new Map(), site: new Map(), loop: new Map() },
      effective: new Map(),
      shelveTimers: new Map(),
      seq: 0,
      overflow: 0,
      unjournalled: new Set(),
    };
  }

  static async start(ctx: ServerContext, opts: AlarmServiceOptions): Promise<AlarmService> {
    const { journal, entries } = AlarmJournal.open(
      opts.journalPath ?? ctx.config.ALARM_JOURNAL_PATH,
      opts.journalMaxBytes ?? ctx.config.ALARM_JOURNAL_MAX_BYTES,
    );
    const svc = new AlarmService(ctx, opts, journal);
    const core = svc.core;
    try {
      await loadLoops(core);
      await loadPolicies(core);
      await loadPoints(core);
      replay(core, entries);
      for (const rec of core.points.values()) syncShelveTimer(core, rec);
      svc.subscribe();
      await svc.resumeEscalations();
    } catch (err) {
      journal.close();
      throw err;
    }
    return svc;
  }

  /** Unacknowledged alarms escalate after a restart as they would have without it. */
  private async resumeEscalations(): Promise<void> {
    const core = this.core;
    // Repeat limits: the last message per rule and loop over the last day.
    try {
      for (const r of await readInitialNotificationsSince(core.sequelize, this.ctx.clock.now() - 24 * 3600_000)) {
        const p = priorityOfSubject(r.subject);
        if (p) this.notifier.rememberSent(r.ruleId, r.loopId, r.sentAt, p);
      }
    } catch (err) {
      core.log(`[alarms] could not restore notification repeat limits: ${err instanceof Error ? err.message : String(err)}`);
    }
    for (const rec of core.points.values()) {
      if (rec.point.state !== "unacknowledged") continue;
      const since = rec.point.changedAt;
      try {
        await this.notifier.resume(toDto(core, rec), core.loops.get(rec.loopId)?.areaId ?? null, since, (ruleId) =>
          escalationSentSince(core.sequelize, rec.id, ruleId, since),
        );
      } catch (err) {
        core.log(`[alarms] could not re-arm escalations of alarm ${rec.id}: ${err instanceof Error ? err.message : String(err)}`);
      }
    }
  }

  private subscribe(): void {
    const onUpdate = (s: LoopStateDto) => this.onTrackerUpdate(s);
    const onPolicy = () => void loadPolicies(this.core).catch((e) => this.core.log(`[alarms] policy reload failed: ${String(e)}`));
    const onLoop = () => void this.refreshLoops();
    this.ctx.bus.on("tracker:update", onUpdate);
    this.ctx.bus.on("policy:changed", onPolicy);
    this.ctx.bus.on("loop:config-changed", onLoop);
    this.unsubscribe.push(
      () => this.ctx.bus.off("tracker:update", onUpdate),
      () => this.ctx.bus.off("policy:changed", onPolicy),
      () => this.ctx.bus.off("loop:config-changed", onLoop),
    );
  }

  private refreshLoops(): Promise<void> {
    this.refreshingLoops ??= (async () => {
      try {
        await loadLoops(this.core);
        await loadPoints(this.core);
        this.core.effective.clear(); // a loop may have moved site, or changed its period
      } catch (err) {
        this.core.log(`[alarms] loop refresh failed: ${err instanceof Error ? err.message : String(err)}`);
      } finally {
        this.refreshingLoops = null;
      }
    })();
    return this.refreshingLoops;
  }

  policyFor(loopId: number): EffectivePolicy {
    return policyFor(this.core, loopId);
  }

  /** Evaluate one tracker update (synchronous: journal + announce happen before it returns). */
  onTrackerUpdate(s: LoopStateDto): void {
    evaluateTrackerUpdate(this.core, s, () => void this.refreshLoops());
  }

  acknowledge(user: TenantContext, alarmId: number, comment: string | null): AlarmDto {
    return personAction(this.core, user, alarmId, "operator", { kind: "acknowledge", comment }, comment?.trim() || null);
  }

  shelve(user: TenantContext, alarmId: number, minutes: number, reason: string): AlarmDto {
    const rec = this.core.points.get(alarmId);
    const maxMinutes = rec ? this.policyFor(rec.loopId).shelveMaxMinutes : 0;
    return personAction(this.core, user, alarmId, "operator", { kind: "shelve", minutes, reason, maxMinutes }, reason.trim());
  }

  unshelve(user: TenantContext, alarmId: number, comment: string | null = null): AlarmDto {
    return personAction(this.core, user, alarmId, "operator", { kind: "unshelve" }, comment);
  }

  removeFromService(user: TenantContext, alarmId: number, reason: string): AlarmDto {
    return personAction(this.core, user, alarmId, "engineer", { kind: "remove-from-service", reason }, reason.trim());
  }

  returnToService(user: TenantContext, alarmId: number, comment: string | null = null): AlarmDto {
    return personAction(this.core, user, alarmId, "engineer", { kind: "return-to-service" }, comment);
  }

  toDto(rec: PointRecord): AlarmDto {
    return toDto(this.core, rec);
  }

  list(tenantId: number, f: AlarmListFilter = {}): AlarmDto[] {
    return listAlarms(this.core, tenantId, f);
  }

  get(tenantId: number, alarmId: number): AlarmDto | null {
    const rec = this.core.points.get(alarmId);
    return rec && rec.tenantId === tenantId ? toDto(this.core, rec) : null;
  }

  /** Transitions of one alarm not yet in the database (shown with the stored events). */
  pendingEvents(tenantId: number, alarmId: number): JournalEntry[] {
    return this.writer.pending.filter((e) => e.alarmId === alarmId && e.tenantId === tenantId);
  }

  loopFacts(loopId: number): LoopFacts | null {
    return this.core.loops.get(loopId) ?? null;
  }

  latestState(loopId: number): LoopStateDto | null {
    return this.core.lastState.get(loopId) ?? null;
  }

  /** One alarm with its occurrences and events (journalled ones not yet in MariaDB included). */
  async detail(tenantId: number, alarmId: number) {
    const a = this.get(tenantId, alarmId);
    if (!a) throw new NotFoundError("Alarm");
    return alarmDetail(this.core.sequelize, a, this.pendingEvents(tenantId, alarmId));
  }

  kpis(tenantId: number, from: number, to: number, areaId: number | null): Promise<AlarmKpis> {
    return alarmKpis(this.core.sequelize, tenantId, from, to, areaId);
  }

  getPolicy(user: TenantContext, scope: PolicyScope, id: number): Promise<PolicyView> {
    const core = this.core;
    return readPolicy(core.sequelize, user, scope, id, core.policyLayers, policyLoops(core), (loopId) => core.lastState.get(loopId)?.oscillation?.periodS ?? null);
  }

  /** Set one scope's levels; effective at once (no restart), logged with reason and MOC reference. */
  async putPolicy(user: TenantContext, scope: PolicyScope, id: number, settings: unknown, reason: string, mocReference: string | null): Promise<PolicyView> {
    await writePolicy(this.core.sequelize, user, scope, id, settings, reason, mocReference, policyLoops(this.core));
    await loadPolicies(this.core);
    this.ctx.bus.emit("policy:changed", user.tenantId);
    return this.getPolicy(user, scope, id);
  }

  /** Wait until every transition so far is in MariaDB (tests; shutdown). */
  async flush(): Promise<void> {
    await this.writer.flush();
  }

  health(): ServiceHealth {
    const { journal, overflow } = this.core;
    const pending = this.writer.pending.length;
    const full = overflow > 0 || !journal.fits();
    const status = full ? "critical" : pending > 0 && this.writer.lastError ? "degraded" : "ok";
    return {
      status,
      detail: {
        points: this.core.points.size,
        pendingDbWrites: pending,
        journalBytes: journal.sizeBytes,
        journalMaxBytes: journal.maxBytes,
        journalFull: full,
        heldInMemoryOnly: overflow,
        lastSeq: this.core.seq,
        durableSeq: this.writer.durableSeq,
        lastDbError: this.writer.lastError,
        ...(full ? { message: "Alarm journal full: operator actions are paused until the database takes the backlog." } : {}),
      },
    };
  }

  async stop(): Promise<void> {
    for (const u of this.unsubscribe) u();
    this.unsubscribe = [];
    for (const t of this.core.shelveTimers.values()) t.cancel();
    this.core.shelveTimers.clear();
    this.notifier.stop();
    await this.notifier.idle();
    // Try once to write the backlog; what is not written stays in the journal for the next start.
    await Promise.race([this.writer.flush().catch(() => {}), new Promise((r) => setTimeout(r, 3000).unref?.())]);
    this.writer.stop();
    // Transitions held only in memory go to the journal past its limit rather than being lost.
    for (const e of this.writer.pending) if (this.core.unjournalled.has(e.seq)) this.core.journal.append(e, true);
    this.core.journal.close();
  }

  private async rulesFor(tenantId: number): Promise<NotificationRuleRow[]> {
    const cached = this.rulesCache.get(tenantId);
    const now = Date.now();
    if (cached && now - cached.at < 30_000) return cached.rules;
    try {
      const rules = await readAlarmNotificationRules(this.core.sequelize, tenantId);
      this.rulesCache.set(tenantId, { at: now, rules });
      return rules;
    } catch (err) {
      if (cached) return cached.rules;
      throw err;
    }
  }

  /** Forget cached notification rules (after an admin changed them). */
  invalidateRules(tenantId?: number): void {
    if (tenantId == null) this.rulesCache.clear();
    else this.rulesCache.delete(tenantId);
  }

  private async recordSent(rows: SentRow[]): Promise<void> {
    if (!rows.length) return;
    try {
      await recordNotificationsSent(this.core.sequelize, rows);
    } catch (err) {
      this.core.log(`[alarms] could not record ${rows.length} notification(s): ${err instanceof Error ? err.message : String(err)}`);
    }
  }
}

export { journalId };
