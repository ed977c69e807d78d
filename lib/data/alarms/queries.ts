/**
 * Read and configuration queries of the alarm service that go to MariaDB: one alarm with its
 * occurrences and events, the KPI figures of a period, and alarm policies (read with each loop's
 * effective levels and their equivalents; written with a configuration-change record).
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { computeAlarmKpis, type AlarmKpis, type OccurrenceRecord } from "@/lib/domain/alarms/kpis";
import {
  normalizeStoredSettings,
  parsePolicyOverride,
  policyEquivalents,
  resolvePolicy,
  type PolicyOverride,
  type PolicyScope,
} from "@/lib/domain/alarms/policy";
import { ForbiddenError, NotFoundError, ValidationError } from "@/lib/domain/errors";
import { roleAtLeast, type AlarmDto, type TenantContext } from "@/lib/domain/types";
import type { AlarmEventDto, AlarmOccurrenceDto, PolicyView } from "@/lib/domain/services";
import type { JournalEntry } from "@/lib/domain/alarms/journal-entry";
export type { AlarmEventDto, AlarmOccurrenceDto, LoopPolicyView, PolicyView } from "@/lib/domain/services";

const iso = (d: Date | string | number | null | undefined) => (d == null ? null : new Date(d).toISOString());



export async function alarmDetail(
  sequelize: Sequelize,
  alarm: AlarmDto,
  pending: JournalEntry[],
): Promise<{ alarm: AlarmDto; occurrences: AlarmOccurrenceDto[]; events: AlarmEventDto[] }> {
  const evRows = (await sequelize.query(
    `SELECT e.id, e.journal_id, e.at, e.kind, e.from_state, e.to_state, e.user_id, e.comment, e.data, u.name AS user_name, u.email AS user_email
       FROM alarm_events e LEFT JOIN users u ON u.id = e.user_id
      WHERE e.alarm_id = ? AND e.tenant_id = ? ORDER BY e.journal_id DESC LIMIT 500`,
    { replacements: [alarm.id, alarm.tenantId], type: QueryTypes.SELECT },
  )) as Record<string, unknown>[];
  const events: AlarmEventDto[] = evRows.map((r) => ({
    id: Number(r.id),
    journalId: String(r.journal_id),
    at: iso(r.at as Date) as string,
    kind: String(r.kind),
    fromState: (r.from_state as string | null) ?? null,
    toState: (r.to_state as string | null) ?? null,
    userId: r.user_id == null ? null : Number(r.user_id),
    userName: (r.user_name as string | null) ?? null,
    userEmail: (r.user_email as string | null) ?? null,
    comment: (r.comment as string | null) ?? null,
    data: typeof r.data === "string" ? safeJson(r.data) : (r.data ?? null),
    pending: false,
  }));
  const pend: AlarmEventDto[] = [...pending].reverse().map((e) => ({
    id: null,
    journalId: String(e.seq).padStart(16, "0"),
    at: new Date(e.at).toISOString(),
    kind: e.kind,
    fromState: e.from,
    toState: e.to,
    userId: e.userId,
    userName: null,
    userEmail: null,
    comment: e.comment,
    data: e.data,
    pending: true,
  }));
  const known = new Set(events.map((e) => e.journalId));
  const occRows = (await sequelize.query(
    "SELECT id, priority, started_at, ended_at, acknowledged_at FROM alarm_occurrences WHERE alarm_id = ? AND tenant_id = ? ORDER BY started_at DESC LIMIT 200",
    { replacements: [alarm.id, alarm.tenantId], type: QueryTypes.SELECT },
  )) as Record<string, unknown>[];
  return {
    alarm,
    occurrences: occRows.map((r) => ({
      id: Number(r.id),
      priority: String(r.priority),
      startedAt: iso(r.started_at as Date) as string,
      endedAt: iso(r.ended_at as Date | null),
      acknowledgedAt: iso(r.acknowledged_at as Date | null),
    })),
    events: [...pend.filter((e) => !known.has(e.journalId)), ...events],
  };
}

function safeJson(s: string): unknown {
  try {
    return JSON.parse(s) as unknown;
  } catch {
    return s;
  }
}

export async function alarmKpis(sequelize: Sequelize, tenantId: number, from: number, to: number, areaId: number | null): Promise<AlarmKpis> {
  const rows = (await sequelize.query(
    `SELECT alarm_id, loop_id, area_id, priority, started_at, ended_at FROM alarm_occurrences
      WHERE tenant_id = ? AND started_at < ? AND (started_at >= ? OR ended_at IS NULL OR ended_at > ?)
      ${areaId != null ? "AND area_id = ?" : ""}`,
    { replacements: [tenantId, new Date(to), new Date(from), new Date(from), ...(areaId != null ? [areaId] : [])], type: QueryTypes.SELECT },
  )) as Record<string, unknown>[];
  const occ: OccurrenceRecord[] = rows.map((r) => ({
    alarmId: Number(r.alarm_id),
    loopId: Number(r.loop_id),
    areaId: r.area_id == null ? null : Number(r.area_id),
    priority: r.priority as OccurrenceRecord["priority"],
    startedAt: new Date(r.started_at as Date).getTime(),
    endedAt: r.ended_at == null ? null : new Date(r.ended_at as Date).getTime(),
  }));
  return computeAlarmKpis(occ, from, to);
}

// ---------------------------------------------------------------- policies



export interface PolicyLoopInfo {
  id: number;
  tenantId: number;
  siteId: number;
  tag: string;
  estimationPeriodS: number;
}

type Layers = { tenant: Map<number, PolicyOverride>; site: Map<number, PolicyOverride>; loop: Map<number, PolicyOverride> };

async function checkScope(sequelize: Sequelize, user: TenantContext, scope: PolicyScope, id: number, loops: PolicyLoopInfo[]): Promise<void> {
  if (scope === "tenant" && id !== user.tenantId) throw new NotFoundError("Tenant");
  if (scope === "site") {
    const rows = (await sequelize.query("SELECT id FROM sites WHERE id = ? AND tenant_id = ?", { replacements: [id, user.tenantId], type: QueryTypes.SELECT })) as unknown[];
    if (rows.length === 0) throw new NotFoundError("Site");
  }
  if (scope === "loop" && !loops.some((l) => l.id === id && l.tenantId === user.tenantId)) throw new NotFoundError("Loop");
}

export async function readPolicy(
  sequelize: Sequelize,
  user: TenantContext,
  scope: PolicyScope,
  id: number,
  layers: Layers,
  loops: PolicyLoopInfo[],
  /** Oscillation period (s) of the loop's slowest-decaying oscillating mode now, from its assessment. */
  oscillationPeriodS: (loopId: number) => number | null,
): Promise<PolicyView> {
  await checkScope(sequelize, user, scope, id, loops);
  const [row] = (await sequelize.query("SELECT settings, updated_at FROM alarm_policies WHERE tenant_id = ? AND scope = ? AND scope_id = ?", {
    replacements: [user.tenantId, scope, id],
    type: QueryTypes.SELECT,
  })) as { settings: unknown; updated_at: Date }[];
  const inScope = loops.filter((l) => l.tenantId === user.tenantId && (scope === "tenant" || (scope === "site" ? l.siteId === id : l.id === id)));
  const siteOf = scope === "site" ? id : scope === "loop" ? inScope[0]?.siteId : undefined;
  const effective = resolvePolicy({
    tenant: layers.tenant.get(user.tenantId),
    site: siteOf != null ? layers.site.get(siteOf) : null,
    loop: scope === "loop" ? layers.loop.get(id) : null,
  });
  return {
    scope,
    id,
    settings: row ? parsePolicyOverrideLenient(scope, row.settings) : null,
    updatedAt: row ? iso(row.updated_at) : null,
    effective,
    loops: inScope
      .sort((a, b) => a.tag.localeCompare(b.tag))
      .map((l) => {
        const eff = resolvePolicy({ tenant: layers.tenant.get(l.tenantId), site: layers.site.get(l.siteId), loop: layers.loop.get(l.id) });
        const osc = oscillationPeriodS(l.id);
        return { loopId: l.id, tag: l.tag, estimationPeriodS: l.estimationPeriodS, effective: eff, oscillationPeriodS: osc, equivalents: policyEquivalents(eff, l.estimationPeriodS, osc) };
      }),
  };
}

function parsePolicyOverrideLenient(scope: PolicyScope, raw: unknown): PolicyOverride | null {
  try {
    return parsePolicyOverride(scope, normalizeStoredSettings(raw));
  } catch {
    return null;
  }
}

/** Who may set which scope (docs/architecture.md §7): admins tenant and site levels, engineers loop levels. */
export function policyRole(scope: PolicyScope): "admin" | "engineer" {
  return scope === "loop" ? "engineer" : "admin";
}

export async function writePolicy(
  sequelize: Sequelize,
  user: TenantContext,
  scope: PolicyScope,
  id: number,
  rawSettings: unknown,
  reason: string,
  mocReference: string | null,
  loops: PolicyLoopInfo[],
): Promise<void> {
  const min = policyRole(scope);
  if (!roleAtLeast(user.role, min)) throw new ForbiddenError(`Setting ${scope} alarm levels needs the ${min} role or higher; you are ${user.role}.`);
  if (!reason.trim()) throw new ValidationError("A reason for the change is required (it goes to the configuration change log).");
  const settings = parsePolicyOverride(scope, rawSettings);
  await checkScope(sequelize, user, scope, id, loops);
  await sequelize.transaction(async (transaction) => {
    const [prev] = (await sequelize.query("SELECT id, settings FROM alarm_policies WHERE tenant_id = ? AND scope = ? AND scope_id = ? FOR UPDATE", {
      replacements: [user.tenantId, scope, id],
      type: QueryTypes.SELECT,
      transaction,
    })) as { id: number; settings: unknown }[];
    const before = prev ? normalizeStoredSettings(prev.settings) : {};
    let policyId: number;
    if (prev) {
      policyId = Number(prev.id);
      await sequelize.query("UPDATE alarm_policies SET settings = ?, updated_by = ?, updated_at = UTC_TIMESTAMP(3) WHERE id = ?", {
        replacements: [JSON.stringify(settings), user.userId, policyId],
        transaction,
      });
    } else {
      const [insertId] = (await sequelize.query(
        "INSERT INTO alarm_policies (tenant_id, scope, scope_id, settings, updated_by, created_at, updated_at) VALUES (?,?,?,?,?,UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))",
        { replacements: [user.tenantId, scope, id, JSON.stringify(settings), user.userId], transaction },
      )) as unknown as [number];
      policyId = Number(insertId);
    }
    const diff: Record<string, { from: unknown; to: unknown }> = {};
    const after = settings as Record<string, unknown>;
    for (const k of new Set([...Object.keys(before), ...Object.keys(after)])) {
      if (JSON.stringify(before[k]) !== JSON.stringify(after[k])) diff[k] = { from: before[k] ?? null, to: after[k] ?? null };
    }
    diff.scope = { from: null, to: `${scope}:${id}` };
    await sequelize.query(
      "INSERT INTO config_changes (tenant_id, user_id, entity, entity_id, diff, reason, moc_reference, at) VALUES (?,?,?,?,?,?,?,UTC_TIMESTAMP(3))",
      { replacements: [user.tenantId, user.userId, "alarm_policy", policyId, JSON.stringify(diff), reason.trim(), mocReference?.trim() || null], transaction },
    );
  });
}
