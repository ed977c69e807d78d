/**
 * The alarm service: evaluates every tracker update against the loop's effective policy, drives
 * each alarm point through the ISA-18.2 state model (lib/alarms), and makes every transition
 * durable in this order: append to the fsync'd journal -> announce (bus + Socket.IO tenant room,
 * notifications) -> write to MariaDB (in order, replayed after an outage).
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
import { QueryTypes } from "sequelize";
import {
  CONDITION_PRIORITY,
  evaluateConditions,
  forecastMinutesOf,
  isTrustedEstimate,
  memoryForActive,
  type ConditionMemory,
} from "@/lib/domain/alarms/conditions";
import {
  normalizeStoredSettings,
  parsePolicyOverride,
  resolvePolicy,
  type EffectivePolicy,
  type PolicyOverride,
} from "@/lib/domain/alarms/policy";
import { applyAlarmAction, type AlarmAction, type TransitionResult } from "@/lib/domain/alarms/state-machine";
import { publicOrigin } from "@/lib/config";
import { ForbiddenError, HttpError, NotFoundError } from "@/lib/domain/errors";
import { tenantRoom } from "@/lib/domain/events";
import {
  ALARM_CONDITIONS,
  roleAtLeast,
  type AlarmCondition,
  type AlarmDto,
  type AlarmPriority,
  type AlarmState,
  type LoopStateDto,
  type Role,
  type TenantContext,
} from "@/lib/domain/types";
import type { ServerContext, Service, ServiceHealth } from "@/server/context";
import { AlarmDbWriter, journalId, LAST_KNOWN_MEMBERSHIP, type LastKnownAuthorisation } from "@/lib/data/alarms/db-writer";
import { AlarmJournal, type JournalEntry, type PointSnapshot } from "./journal";
import { AlarmNotifier, priorityOfSubject, type NotificationRuleRow, type SentRow } from "./notifier";
import type { MailService } from "@/server/mail";
import { alarmDetail, alarmKpis, readPolicy, writePolicy, type PolicyLoopInfo, type PolicyView } from "@/lib/data/alarms/queries";
import type { AlarmKpis } from "@/lib/domain/alarms/kpis";
import type { PolicyScope } from "@/lib/domain/alarms/policy";

interface LoopFacts {
  id: number;
  tenantId: number;
  siteId: number;
  areaId: number | null;
  tag: string;
  estimationPeriodS: number;
  baselineTimeConstantS: number | null;
  enabled: boolean;
}

interface PointRecord {
  id: number;
  tenantId: number;
  loopId: number;
  condition: AlarmCondition;
  seq: number;
  point: PointSnapshot;
}

export interface AlarmServiceOptions {
  sequelize: Sequelize;
  journalPath?: string;
  journalMaxBytes?: number;
  /** Real-time wait before retrying the database after an error. */
  retryMs?: number;
  quiet?: boolean;
}


export class JournalFullHttpError extends HttpError {
  constructor() {
    super(
      503,
      "Alarm actions are paused: the alarm journal is full because the database has not taken the backlog yet. Nothing has been lost; try again when the database is back.",
    );
  }
}

const ms = (d: Date | string | null | undefined): number | null => (d == null ? null : new Date(d).getTime());

export class AlarmService implements Service, AlarmApi {
  readonly name = "alarms";
  private points = new Map<number, PointRecord>();
  private byLoop = new Map<number, Map<AlarmCondition, number>>();
  private loops = new Map<number, LoopFacts>();
  private memory = new Map<number, ConditionMemory>();
  /** Loops whose tracker has given a trusted estimate since this service started (see onTrackerUpdate). */
  private evidenced = new Set<number>();
  private lastState = new Map<number, LoopStateDto>();
  private policyLayers = { tenant: new Map<number, PolicyOverride>(), site: new Map<number, PolicyOverride>(), loop: new Map<number, PolicyOverride>() };
  private effective = new Map<number, EffectivePolicy>();
  private shelveTimers = new Map<number, { cancel(): void }>();
  private rulesCache = new Map<number, { at: number; rules: NotificationRuleRow[] }>();
  private seq = 0;
  private overflow = 0;
  /** Seqs of transitions held in memory only (journal full), spilled to the journal at shutdown. */
  private unjournalled = new Set<number>();
  private journal: AlarmJournal;
  readonly writer: AlarmDbWriter;
  readonly notifier: AlarmNotifier;
  private sequelize: Sequelize;
  private unsubscribe: (() => void)[] = [];
  private refreshingLoops: Promise<void> | null = null;
  private log: (msg: string) => void;

  private constructor(
    private ctx: ServerContext,
    opts: AlarmServiceOptions,
    journal: AlarmJournal,
  ) {
    this.sequelize = opts.sequelize;
    this.journal = journal;
    this.log = opts.quiet ? () => {} : (m) => console.warn(m);
    this.writer = new AlarmDbWriter(this.sequelize, {
      retryMs: opts.retryMs ?? 1000,
      log: this.log,
      onDrained: () => {
        if (this.writer.pending.length === 0) {
          this.journal.truncate();
          this.overflow = 0;
          this.unjournalled.clear();
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
        const r = this.points.get(id);
        return r ? this.toDto(r) : null;
      },
      link: (id) => `${publicOrigin(ctx.config)}/alarms/${id}`,
      log: this.log,
    });
  }

  static async start(ctx: ServerContext, opts: AlarmServiceOptions): Promise<AlarmService> {
    const { journal, entries } = AlarmJournal.open(
      opts.journalPath ?? ctx.config.ALARM_JOURNAL_PATH,
      opts.journalMaxBytes ?? ctx.config.ALARM_JOURNAL_MAX_BYTES,
    );
    const svc = new AlarmService(ctx, opts, journal);
    try {
      await svc.loadLoops();
      await svc.loadPolicies();
      await svc.loadPoints();
      svc.replay(entries);
      svc.armShelveTimers();
      svc.subscribe();
      await svc.resumeEscalations();
    } catch (err) {
      journal.close();
      throw err;
    }
    return svc;
  }

  // ------------------------------------------------------------------ loading

  private async loadLoops(): Promise<void> {
    const rows = (await this.sequelize.query(
      "SELECT id, tenant_id, site_id, area_id, tag, estimation_period_s, baseline_time_constant_s, enabled FROM loops",
      { type: QueryTypes.SELECT },
    )) as Record<string, unknown>[];
    for (const r of rows) {
      this.loops.set(Number(r.id), {
        id: Number(r.id),
        tenantId: Number(r.tenant_id),
        siteId: Number(r.site_id),
        areaId: r.area_id == null ? null : Number(r.area_id),
        tag: String(r.tag),
        estimationPeriodS: Number(r.estimation_period_s),
        baselineTimeConstantS: r.baseline_time_constant_s == null ? null : Number(r.baseline_time_constant_s),
        enabled: Boolean(r.enabled),
      });
    }
    const values: unknown[] = [];
    const tuples: string[] = [];
    for (const l of this.loops.values()) {
      for (const c of ALARM_CONDITIONS) {
        tuples.push("(?,?,?,?,'normal',0,'',UTC_TIMESTAMP(3),UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))");
        values.push(l.tenantId, l.id, c, CONDITION_PRIORITY[c]);
      }
    }
    for (let i = 0; i < tuples.length; i += 400) {
      await this.sequelize.query(
        "INSERT IGNORE INTO alarms (tenant_id, loop_id, `condition`, priority, state, active, message, changed_at, created_at, updated_at) VALUES " +
          tuples.slice(i, i + 400).join(","),
        { replacements: values.slice(i * 4, (i + 400) * 4) },
      );
    }
  }

  private async loadPolicies(): Promise<void> {
    const rows = (await this.sequelize.query("SELECT tenant_id, scope, scope_id, settings FROM alarm_policies", {
      type: QueryTypes.SELECT,
    })) as { tenant_id: number; scope: "tenant" | "site" | "loop"; scope_id: number; settings: unknown }[];
    this.policyLayers.tenant.clear();
    this.policyLayers.site.clear();
    this.policyLayers.loop.clear();
    for (const r of rows) {
      try {
        const o = parsePolicyOverride(r.scope, normalizeStoredSettings(r.settings));
        this.policyLayers[r.scope].set(Number(r.scope_id), o);
      } catch (err) {
        this.log(`[alarms] ignoring the stored ${r.scope} policy ${r.scope_id}: ${err instanceof Error ? err.message : String(err)}`);
      }
    }
    this.effective.clear();
  }

  private async loadPoints(): Promise<void> {
    const rows = (await this.sequelize.query("SELECT * FROM alarms", { type: QueryTypes.SELECT })) as Record<string, unknown>[];
    for (const r of rows) {
      // Memory may be ahead of the database (writes pending): never move a known point back.
      const known = this.points.get(Number(r.id));
      if (known && known.seq >= Number(r.journal_seq ?? 0)) continue;
      const rec: PointRecord = {
        id: Number(r.id),
        tenantId: Number(r.tenant_id),
        loopId: Number(r.loop_id),
        condition: r.condition as AlarmCondition,
        seq: Number(r.journal_seq ?? 0),
        point: {
          state: r.state as AlarmState,
          active: Boolean(r.active),
          priority: r.priority as AlarmPriority,
          shelvedUntil: ms(r.shelved_until as Date | null),
          shelveReason: (r.shelve_reason as string | null) ?? null,
          suppressedReason: (r.suppressed_reason as string | null) ?? null,
          outOfServiceReason: (r.out_of_service_reason as string | null) ?? null,
          activatedAt: ms(r.activated_at as Date | null),
          occurrenceOpen: Boolean(r.occurrence_open),
          changedAt: ms(r.changed_at as Date) ?? this.ctx.clock.now(),
          value: r.value == null ? null : Number(r.value),
          level: r.level == null ? null : Number(r.level),
          message: String(r.message ?? ""),
        },
      };
      this.points.set(rec.id, rec);
      let m = this.byLoop.get(rec.loopId);
      if (!m) this.byLoop.set(rec.loopId, (m = new Map()));
      m.set(rec.condition, rec.id);
      this.seq = Math.max(this.seq, rec.seq);
      this.writer.durableSeq = Math.max(this.writer.durableSeq, rec.seq);
    }
  }

  /** Bring memory up to the journal and queue what the database does not have yet. */
  private replay(entries: JournalEntry[]): void {
    for (const e of entries) {
      this.seq = Math.max(this.seq, e.seq);
      const rec = this.points.get(e.alarmId);
      if (rec && e.seq > rec.seq) {
        rec.point = e.point;
        rec.seq = e.seq;
      }
      this.writer.enqueue(e);
    }
    if (entries.length) this.log(`[alarms] replaying ${entries.length} journal entr${entries.length === 1 ? "y" : "ies"} into the database`);
  }

  /** Unacknowledged alarms escalate after a restart as they would have without it. */
  private async resumeEscalations(): Promise<void> {
    // Repeat limits: the last message per rule and loop over the last day.
    try {
      const sent = (await this.sequelize.query(
        `SELECT ns.rule_id, a.loop_id, ns.subject, ns.sent_at FROM notifications_sent ns JOIN alarms a ON a.id = ns.alarm_id
          WHERE ns.status = 'sent' AND ns.kind = 'initial' AND ns.rule_id IS NOT NULL AND ns.sent_at >= ?`,
        { replacements: [new Date(this.ctx.clock.now() - 24 * 3600_000)], type: QueryTypes.SELECT },
      )) as { rule_id: number; loop_id: number; subject: string; sent_at: Date }[];
      for (const r of sent) {
        const p = priorityOfSubject(r.subject);
        if (p) this.notifier.rememberSent(Number(r.rule_id), Number(r.loop_id), new Date(r.sent_at).getTime(), p);
      }
    } catch (err) {
      this.log(`[alarms] could not restore notification repeat limits: ${err instanceof Error ? err.message : String(err)}`);
    }
    for (const rec of this.points.values()) {
      if (rec.point.state !== "unacknowledged") continue;
      const since = rec.point.changedAt;
      try {
        await this.notifier.resume(this.toDto(rec), this.loops.get(rec.loopId)?.areaId ?? null, since, async (ruleId) => {
          const rows = (await this.sequelize.query(
            "SELECT id FROM notifications_sent WHERE alarm_id = ? AND rule_id = ? AND kind = 'escalation' AND sent_at >= ? LIMIT 1",
            { replacements: [rec.id, ruleId, new Date(since)], type: QueryTypes.SELECT },
          )) as unknown[];
          return rows.length > 0;
        });
      } catch (err) {
        this.log(`[alarms] could not re-arm escalations of alarm ${rec.id}: ${err instanceof Error ? err.message : String(err)}`);
      }
    }
  }

  private armShelveTimers(): void {
    for (const rec of this.points.values()) this.syncShelveTimer(rec);
  }

  private subscribe(): void {
    const onUpdate = (s: LoopStateDto) => this.onTrackerUpdate(s);
    const onPolicy = () => void this.loadPolicies().catch((e) => this.log(`[alarms] policy reload failed: ${String(e)}`));
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
        await this.loadLoops();
        await this.loadPoints();
        this.effective.clear(); // a loop may have moved site, or changed its period
      } catch (err) {
        this.log(`[alarms] loop refresh failed: ${err instanceof Error ? err.message : String(err)}`);
      } finally {
        this.refreshingLoops = null;
      }
    })();
    return this.refreshingLoops;
  }

  // ------------------------------------------------------------------ evaluation

  policyFor(loopId: number): EffectivePolicy {
    let eff = this.effective.get(loopId);
    if (!eff) {
      const l = this.loops.get(loopId);
      eff = resolvePolicy({
        tenant: l ? this.policyLayers.tenant.get(l.tenantId) : null,
        site: l ? this.policyLayers.site.get(l.siteId) : null,
        loop: this.policyLayers.loop.get(loopId),
      });
      this.effective.set(loopId, eff);
    }
    return eff;
  }

  /** Evaluate one tracker update (synchronous: journal + announce happen before it returns). */
  onTrackerUpdate(s: LoopStateDto): void {
    const loop = this.loops.get(s.loopId);
    const ids = this.byLoop.get(s.loopId);
    if (!loop || !ids || loop.tenantId !== s.tenantId) {
      if (!loop) void this.refreshLoops();
      return;
    }
    this.lastState.set(s.loopId, s);
    const now = this.ctx.clock.now();
    const policy = this.policyFor(s.loopId);
    const forecastMinutes = forecastMinutesOf(s, now);
    // After a start (a restart, a crash) the alarms are what MariaDB and the journal say, not what
    // this process has seen: until the loop's tracker gives a trusted estimate again, its alarms
    // keep their state (no clear, no suppression, no re-announce; shown values are not updated),
    // and the filters of active alarms start "on" so that evidence must last the off-delay.
    if (!this.evidenced.has(s.loopId)) {
      if (!isTrustedEstimate(s)) return;
      this.evidenced.add(s.loopId);
    }
    const { memory, verdicts } = evaluateConditions(
      this.memory.get(s.loopId) ?? this.restoredMemory(ids),
      s,
      policy,
      { baselineTimeConstantS: loop.baselineTimeConstantS, forecastMinutes },
      now,
    );
    this.memory.set(s.loopId, memory);
    for (const c of ALARM_CONDITIONS) {
      const id = ids.get(c);
      const rec = id == null ? undefined : this.points.get(id);
      if (!rec) continue;
      const v = verdicts[c];
      // Shown values follow every update; they are written with the next transition.
      rec.point = { ...rec.point, value: v.value, level: v.level, message: v.message };
      const actions: AlarmAction[] = [];
      if (v.suppressedReason) {
        actions.push({ kind: "suppress", reason: v.suppressedReason });
        if (!v.active) actions.push({ kind: "clear" });
      } else {
        if (v.active) actions.push({ kind: "activate", priority: v.priority }, { kind: "set-priority", priority: v.priority });
        else actions.push({ kind: "clear" });
        actions.push({ kind: "unsuppress" });
      }
      for (const a of actions) {
        const r = applyAlarmAction(rec.point, a, now);
        if (r) this.commit(rec, a, r, null, null);
      }
    }
  }

  private restoredMemory(ids: Map<AlarmCondition, number>): ConditionMemory {
    const active: { condition: AlarmCondition; priority: AlarmPriority }[] = [];
    for (const [condition, id] of ids) {
      const p = this.points.get(id)?.point;
      if (p?.active) active.push({ condition, priority: p.priority });
    }
    return memoryForActive(active);
  }

  // ------------------------------------------------------------------ transitions

  private commit(rec: PointRecord, action: AlarmAction, r: TransitionResult, userId: number | null, comment: string | null, data: Record<string, unknown> | null = null): AlarmDto {
    const loop = this.loops.get(rec.loopId);
    const point: PointSnapshot = { ...rec.point, ...r.point };
    const entry: JournalEntry = {
      seq: this.seq + 1,
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
    if (this.journal.fits(Buffer.byteLength(JSON.stringify(entry)) + 1) && this.overflow === 0) {
      this.journal.append(entry);
    } else {
      // Journal full: keep the transition in memory, in order, for the database (health: critical).
      this.overflow++;
      this.unjournalled.add(entry.seq);
    }
    this.seq = entry.seq;
    rec.point = point;
    rec.seq = entry.seq;
    const dto = this.toDto(rec);
    this.ctx.bus.emit("alarm:changed", dto);
    this.ctx.io?.to(tenantRoom(rec.tenantId)).emit("alarm:changed", dto);
    this.writer.enqueue(entry);
    this.syncShelveTimer(rec);
    if (r.announce) this.notifier.announce(dto, loop?.areaId ?? null);
    else if (r.to !== "unacknowledged") this.notifier.settle(rec.id);
    return dto;
  }

  private syncShelveTimer(rec: PointRecord): void {
    this.shelveTimers.get(rec.id)?.cancel();
    this.shelveTimers.delete(rec.id);
    const until = rec.point.state === "shelved" ? rec.point.shelvedUntil : null;
    if (until == null) return;
    const fire = () => {
      this.shelveTimers.delete(rec.id);
      const r = applyAlarmAction(rec.point, { kind: "shelve-expired" }, this.ctx.clock.now());
      if (r) this.commit(rec, { kind: "shelve-expired" }, r, null, "shelve expired");
    };
    const wait = until - this.ctx.clock.now();
    if (wait <= 0) queueMicrotask(fire);
    else this.shelveTimers.set(rec.id, this.ctx.clock.setTimeout(fire, wait));
  }

  // ------------------------------------------------------------------ person actions

  private owned(user: TenantContext, alarmId: number, min: Role): PointRecord {
    if (!roleAtLeast(user.role, min)) throw new ForbiddenError(`This needs the ${min} role or higher; you are ${user.role}.`);
    const rec = this.points.get(alarmId);
    if (!rec || rec.tenantId !== user.tenantId) throw new NotFoundError("Alarm");
    if (this.overflow > 0 || !this.journal.fits()) throw new JournalFullHttpError();
    return rec;
  }

  private act(user: TenantContext, alarmId: number, min: Role, action: AlarmAction, comment: string | null): AlarmDto {
    const rec = this.owned(user, alarmId, min);
    let r: TransitionResult | null;
    try {
      r = applyAlarmAction(rec.point, action, this.ctx.clock.now());
    } catch (err) {
      if (err instanceof HttpError && err.status === 409)
        this.log(`[alarms] refused: user ${user.userId} tried to ${action.kind} alarm ${alarmId} (${rec.point.state}): ${err.message}`);
      throw err;
    }
    if (!r) return this.toDto(rec);
    // Authorised from the last-known membership (database unreachable): say so in the journal;
    // the writer checks the membership again when the database is back (db-writer.ts).
    const data: LastKnownAuthorisation | null =
      user.membershipAsOf == null
        ? null
        : { authorisation: LAST_KNOWN_MEMBERSHIP, membershipAsOf: new Date(user.membershipAsOf).toISOString(), role: user.role, requiredRole: min };
    return this.commit(rec, action, r, user.userId, comment, data as Record<string, unknown> | null);
  }

  acknowledge(user: TenantContext, alarmId: number, comment: string | null): AlarmDto {
    return this.act(user, alarmId, "operator", { kind: "acknowledge", comment }, comment?.trim() || null);
  }

  shelve(user: TenantContext, alarmId: number, minutes: number, reason: string): AlarmDto {
    const rec = this.points.get(alarmId);
    const maxMinutes = rec ? this.policyFor(rec.loopId).shelveMaxMinutes : 0;
    return this.act(user, alarmId, "operator", { kind: "shelve", minutes, reason, maxMinutes }, reason.trim());
  }

  unshelve(user: TenantContext, alarmId: number, comment: string | null = null): AlarmDto {
    return this.act(user, alarmId, "operator", { kind: "unshelve" }, comment);
  }

  removeFromService(user: TenantContext, alarmId: number, reason: string): AlarmDto {
    return this.act(user, alarmId, "engineer", { kind: "remove-from-service", reason }, reason.trim());
  }

  returnToService(user: TenantContext, alarmId: number, comment: string | null = null): AlarmDto {
    return this.act(user, alarmId, "engineer", { kind: "return-to-service" }, comment);
  }

  // ------------------------------------------------------------------ reads

  toDto(rec: PointRecord): AlarmDto {
    const p = rec.point;
    const iso = (t: number | null) => (t == null ? null : new Date(t).toISOString());
    return {
      id: rec.id,
      tenantId: rec.tenantId,
      loopId: rec.loopId,
      loopTag: this.loops.get(rec.loopId)?.tag ?? `loop ${rec.loopId}`,
      condition: rec.condition,
      priority: p.priority,
      state: p.state,
      active: p.active,
      shelvedUntil: iso(p.shelvedUntil),
      suppressedReason: p.state === "suppressed-by-design" ? p.suppressedReason : null,
      message: p.message,
      value: p.value,
      level: p.level,
      activatedAt: iso(p.activatedAt),
      changedAt: iso(p.changedAt) as string,
    };
  }

  list(tenantId: number, f: AlarmListFilter = {}): AlarmDto[] {
    const out: AlarmDto[] = [];
    for (const rec of this.points.values()) {
      if (rec.tenantId !== tenantId) continue;
      const p = rec.point;
      if (f.state && p.state !== f.state) continue;
      if (f.priority && p.priority !== f.priority) continue;
      if (f.loopId != null && rec.loopId !== f.loopId) continue;
      if (f.from != null && p.changedAt < f.from) continue;
      if (f.to != null && p.changedAt >= f.to) continue;
      out.push(this.toDto(rec));
    }
    const rank: Record<AlarmPriority, number> = { urgent: 0, high: 1, low: 2 };
    return out.sort((a, b) => rank[a.priority] - rank[b.priority] || b.changedAt.localeCompare(a.changedAt) || a.id - b.id);
  }

  get(tenantId: number, alarmId: number): AlarmDto | null {
    const rec = this.points.get(alarmId);
    return rec && rec.tenantId === tenantId ? this.toDto(rec) : null;
  }

  /** Transitions of one alarm not yet in the database (shown with the stored events). */
  pendingEvents(tenantId: number, alarmId: number): JournalEntry[] {
    return this.writer.pending.filter((e) => e.alarmId === alarmId && e.tenantId === tenantId);
  }

  loopFacts(loopId: number): LoopFacts | null {
    return this.loops.get(loopId) ?? null;
  }

  latestState(loopId: number): LoopStateDto | null {
    return this.lastState.get(loopId) ?? null;
  }

  /** One alarm with its occurrences and events (journalled ones not yet in MariaDB included). */
  async detail(tenantId: number, alarmId: number) {
    const a = this.get(tenantId, alarmId);
    if (!a) throw new NotFoundError("Alarm");
    return alarmDetail(this.sequelize, a, this.pendingEvents(tenantId, alarmId));
  }

  kpis(tenantId: number, from: number, to: number, areaId: number | null): Promise<AlarmKpis> {
    return alarmKpis(this.sequelize, tenantId, from, to, areaId);
  }

  private policyLoops(): PolicyLoopInfo[] {
    return [...this.loops.values()].map((l) => ({ id: l.id, tenantId: l.tenantId, siteId: l.siteId, tag: l.tag, estimationPeriodS: l.estimationPeriodS }));
  }

  getPolicy(user: TenantContext, scope: PolicyScope, id: number): Promise<PolicyView> {
    return readPolicy(this.sequelize, user, scope, id, this.policyLayers, this.policyLoops(), (loopId) => this.lastState.get(loopId)?.oscillation?.periodS ?? null);
  }

  /** Set one scope's levels; effective at once (no restart), logged with reason and MOC reference. */
  async putPolicy(user: TenantContext, scope: PolicyScope, id: number, settings: unknown, reason: string, mocReference: string | null): Promise<PolicyView> {
    await writePolicy(this.sequelize, user, scope, id, settings, reason, mocReference, this.policyLoops());
    await this.loadPolicies();
    this.ctx.bus.emit("policy:changed", user.tenantId);
    return this.getPolicy(user, scope, id);
  }

  /** Wait until every transition so far is in MariaDB (tests; shutdown). */
  async flush(): Promise<void> {
    await this.writer.flush();
  }

  health(): ServiceHealth {
    const pending = this.writer.pending.length;
    const full = this.overflow > 0 || !this.journal.fits();
    const status = full ? "critical" : pending > 0 && this.writer.lastError ? "degraded" : "ok";
    return {
      status,
      detail: {
        points: this.points.size,
        pendingDbWrites: pending,
        journalBytes: this.journal.sizeBytes,
        journalMaxBytes: this.journal.maxBytes,
        journalFull: full,
        heldInMemoryOnly: this.overflow,
        lastSeq: this.seq,
        durableSeq: this.writer.durableSeq,
        lastDbError: this.writer.lastError,
        ...(full ? { message: "Alarm journal full: operator actions are paused until the database takes the backlog." } : {}),
      },
    };
  }

  async stop(): Promise<void> {
    for (const u of this.unsubscribe) u();
    this.unsubscribe = [];
    for (const t of this.shelveTimers.values()) t.cancel();
    this.shelveTimers.clear();
    this.notifier.stop();
    await this.notifier.idle();
    // Try once to write the backlog; what is not written stays in the journal for the next start.
    await Promise.race([this.writer.flush().catch(() => {}), new Promise((r) => setTimeout(r, 3000).unref?.())]);
    this.writer.stop();
    // Transitions held only in memory go to the journal past its limit rather than being lost.
    for (const e of this.writer.pending) if (this.unjournalled.has(e.seq)) this.journal.append(e, true);
    this.journal.close();
  }

  // ------------------------------------------------------------------ notifications plumbing

  private async rulesFor(tenantId: number): Promise<NotificationRuleRow[]> {
    const cached = this.rulesCache.get(tenantId);
    const now = Date.now();
    if (cached && now - cached.at < 30_000) return cached.rules;
    try {
      const rows = (await this.sequelize.query(
        "SELECT id, tenant_id, area_id, name, recipients, min_priority, escalation_minutes, repeat_minutes FROM notification_rules WHERE tenant_id = ? AND enabled = 1 AND kind = 'alarm'",
        { replacements: [tenantId], type: QueryTypes.SELECT },
      )) as Record<string, unknown>[];
      const rules = rows.map((r) => ({
        id: Number(r.id),
        tenantId: Number(r.tenant_id),
        areaId: r.area_id == null ? null : Number(r.area_id),
        name: String(r.name),
        recipients: (typeof r.recipients === "string" ? (JSON.parse(r.recipients) as string[]) : (r.recipients as string[])) ?? [],
        minPriority: r.min_priority as AlarmPriority,
        escalationMinutes: r.escalation_minutes == null ? null : Number(r.escalation_minutes),
        repeatMinutes: r.repeat_minutes == null ? null : Number(r.repeat_minutes),
      }));
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
      await this.sequelize.query(
        "INSERT INTO notifications_sent (tenant_id, rule_id, alarm_id, recipient, kind, subject, status, message_id, error, sent_at) VALUES " +
          rows.map(() => "(?,?,?,?,?,?,?,?,?,?)").join(","),
        {
          replacements: rows.flatMap((r) => [r.tenantId, r.ruleId, r.alarmId, r.recipient, r.kind, r.subject.slice(0, 300), r.status, r.messageId, r.error, new Date(r.sentAt)]),
        },
      );
    } catch (err) {
      this.log(`[alarms] could not record ${rows.length} notification(s): ${err instanceof Error ? err.message : String(err)}`);
    }
  }
}

export { journalId };
