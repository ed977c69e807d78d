/**
 * The alarm service's in-memory store: every point with the journal sequence it reflects, the
 * loops it watches and the policy layers, loaded from MariaDB (lib/data/alarms/store.ts) and
 * brought up to the journal on start. Memory is the truth between writes: the database is
 * behind it by the writer's backlog (db-writer.ts), never ahead.
 */
import type { Sequelize } from "sequelize";
import {
  ensureAlarmPoints,
  readAlarmLoops,
  readAlarmPoints,
  readPolicyRows,
  type AlarmLoopFacts,
  type StoredAlarmPoint,
} from "@/lib/data/alarms/store";
import type { AlarmDbWriter } from "@/lib/data/alarms/db-writer";
import type { ConditionMemory } from "@/lib/domain/alarms/conditions";
import { normalizeStoredSettings, parsePolicyOverride, resolvePolicy, type EffectivePolicy, type PolicyOverride } from "@/lib/domain/alarms/policy";
import type { AlarmListFilter } from "@/lib/domain/services";
import { ALARM_CONDITIONS, type AlarmCondition, type AlarmDto, type AlarmPriority, type LoopStateDto } from "@/lib/domain/types";
import type { PolicyLoopInfo } from "@/lib/data/alarms/queries";
import type { ServerContext } from "@/server/context";
import type { AlarmJournal, JournalEntry } from "./journal";
import type { AlarmNotifier } from "./notifier";

export type LoopFacts = AlarmLoopFacts;
export type PointRecord = StoredAlarmPoint;

/** The state the service's parts share (store, evaluation.ts, actions.ts). */
export interface AlarmCore {
  ctx: ServerContext;
  sequelize: Sequelize;
  journal: AlarmJournal;
  writer: AlarmDbWriter;
  notifier: AlarmNotifier;
  log: (msg: string) => void;
  points: Map<number, PointRecord>;
  byLoop: Map<number, Map<AlarmCondition, number>>;
  loops: Map<number, LoopFacts>;
  memory: Map<number, ConditionMemory>;
  /** Loops whose tracker has given a trusted estimate since this service started (evaluation.ts). */
  evidenced: Set<number>;
  lastState: Map<number, LoopStateDto>;
  policyLayers: { tenant: Map<number, PolicyOverride>; site: Map<number, PolicyOverride>; loop: Map<number, PolicyOverride> };
  effective: Map<number, EffectivePolicy>;
  shelveTimers: Map<number, { cancel(): void }>;
  seq: number;
  /** Transitions held in memory only because the journal was full. */
  overflow: number;
  /** Seqs of transitions held in memory only (journal full), spilled to the journal at shutdown. */
  unjournalled: Set<number>;
}

export async function loadLoops(core: AlarmCore): Promise<void> {
  for (const l of await readAlarmLoops(core.sequelize)) core.loops.set(l.id, l);
  await ensureAlarmPoints(core.sequelize, core.loops.values());
}

export async function loadPolicies(core: AlarmCore): Promise<void> {
  const rows = await readPolicyRows(core.sequelize);
  core.policyLayers.tenant.clear();
  core.policyLayers.site.clear();
  core.policyLayers.loop.clear();
  for (const r of rows) {
    try {
      const o = parsePolicyOverride(r.scope, normalizeStoredSettings(r.settings));
      core.policyLayers[r.scope].set(r.scopeId, o);
    } catch (err) {
      core.log(`[alarms] ignoring the stored ${r.scope} policy ${r.scopeId}: ${err instanceof Error ? err.message : String(err)}`);
    }
  }
  core.effective.clear();
}

export async function loadPoints(core: AlarmCore): Promise<void> {
  for (const rec of await readAlarmPoints(core.sequelize, core.ctx.clock.now())) {
    // Memory may be ahead of the database (writes pending): never move a known point back.
    const known = core.points.get(rec.id);
    if (known && known.seq >= rec.seq) continue;
    core.points.set(rec.id, rec);
    let m = core.byLoop.get(rec.loopId);
    if (!m) core.byLoop.set(rec.loopId, (m = new Map()));
    m.set(rec.condition, rec.id);
    core.seq = Math.max(core.seq, rec.seq);
    core.writer.durableSeq = Math.max(core.writer.durableSeq, rec.seq);
  }
}

/**
 * Bring memory up to the journal and queue what the database does not have yet. An entry of a
 * retired condition (`sluggish`, written before migration 0104 closed those alarms) is dropped:
 * replaying it would reopen an alarm that is no longer an operator alarm.
 */
export function replay(core: AlarmCore, entries: JournalEntry[]): void {
  for (const e of entries) {
    core.seq = Math.max(core.seq, e.seq);
    if (!(ALARM_CONDITIONS as readonly string[]).includes(e.condition)) {
      core.log(`[alarms] dropping journal entry ${e.seq} of the retired ${e.condition} condition (alarm ${e.alarmId})`);
      continue;
    }
    const rec = core.points.get(e.alarmId);
    if (rec && e.seq > rec.seq) {
      rec.point = e.point;
      rec.seq = e.seq;
    }
    core.writer.enqueue(e);
  }
  if (entries.length) core.log(`[alarms] replaying ${entries.length} journal entr${entries.length === 1 ? "y" : "ies"} into the database`);
}

/** The loop's effective policy (tenant, site and loop layers over the defaults), cached. */
export function policyFor(core: AlarmCore, loopId: number): EffectivePolicy {
  let eff = core.effective.get(loopId);
  if (!eff) {
    const l = core.loops.get(loopId);
    eff = resolvePolicy({
      tenant: l ? core.policyLayers.tenant.get(l.tenantId) : null,
      site: l ? core.policyLayers.site.get(l.siteId) : null,
      loop: core.policyLayers.loop.get(loopId),
    });
    core.effective.set(loopId, eff);
  }
  return eff;
}

export function policyLoops(core: AlarmCore): PolicyLoopInfo[] {
  return [...core.loops.values()].map((l) => ({ id: l.id, tenantId: l.tenantId, siteId: l.siteId, tag: l.tag, estimationPeriodS: l.estimationPeriodS }));
}

export function toDto(core: AlarmCore, rec: PointRecord): AlarmDto {
  const p = rec.point;
  const iso = (t: number | null) => (t == null ? null : new Date(t).toISOString());
  return {
    id: rec.id,
    tenantId: rec.tenantId,
    loopId: rec.loopId,
    loopTag: core.loops.get(rec.loopId)?.tag ?? `loop ${rec.loopId}`,
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

/** A tenant's alarms, most urgent first, then newest change first. */
export function listAlarms(core: AlarmCore, tenantId: number, f: AlarmListFilter = {}): AlarmDto[] {
  const out: AlarmDto[] = [];
  for (const rec of core.points.values()) {
    if (rec.tenantId !== tenantId) continue;
    const p = rec.point;
    if (f.state && p.state !== f.state) continue;
    if (f.priority && p.priority !== f.priority) continue;
    if (f.loopId != null && rec.loopId !== f.loopId) continue;
    if (f.from != null && p.changedAt < f.from) continue;
    if (f.to != null && p.changedAt >= f.to) continue;
    out.push(toDto(core, rec));
  }
  const rank: Record<AlarmPriority, number> = { urgent: 0, high: 1, low: 2 };
  return out.sort((a, b) => rank[a.priority] - rank[b.priority] || b.changedAt.localeCompare(a.changedAt) || a.id - b.id);
}
