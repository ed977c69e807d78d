/**
 * Sparkplug B rows (migration 0121): group ids owned by tenants, metric-to-loop mappings and the
 * last birth of every edge node and device. The running pipeline loads and saves through the
 * first functions (it passes its own Sequelize); the admin's reads and changes are tenant-scoped
 * and write the change log in the same transaction.
 */
import { QueryTypes, type Sequelize, type Transaction } from "sequelize";
import { inConfigTransaction, logConfigChange, diffOf } from "@/lib/data/admin/config-log";
import { getDb } from "@/lib/data/db/sequelize";
import { ConflictError, NotFoundError, ValidationError } from "@/lib/domain/errors";
import { checkMappingAgainstBirth, datatypeName, type BirthRecord, type LoopMapping, type MappingInput, type MetricDef, type SparkplugOverviewDto } from "@/lib/domain/sparkplug";
import type { TenantContext } from "@/lib/domain/types";
import { siteScopeSql, siteVisible } from "@/lib/data/tenancy";

interface BirthRow {
  tenant_id: number;
  group_id: string;
  edge_node: string;
  device: string;
  bd_seq: number | string | null;
  metrics: string;
  born_at: number | string;
  dead_at: number | string | null;
  needs_rebirth: string | null;
}

interface MappingRow {
  loop_id: number;
  tenant_id: number;
  group_id: string;
  edge_node: string;
  device: string;
  sp_metric: string;
  pv_metric: string;
  mv_metric: string;
  mode_metric: string | null;
  tag?: string;
  site_id?: number;
}

const toMapping = (r: MappingRow): LoopMapping => ({ loopId: r.loop_id, tenantId: r.tenant_id, groupId: r.group_id, edgeNode: r.edge_node, device: r.device, sp: r.sp_metric, pv: r.pv_metric, mv: r.mv_metric, mode: r.mode_metric });

const numOrNull = (v: number | string | null) => (v === null ? null : Number(v));

function toBirth(r: BirthRow): BirthRecord & { tenantId: number } {
  let metrics: MetricDef[] = [];
  try {
    const parsed: unknown = JSON.parse(r.metrics);
    if (Array.isArray(parsed)) metrics = parsed as MetricDef[];
  } catch {
    /* an unreadable row restores as a birth without metrics: the device shows as needing a rebirth */
  }
  return { tenantId: r.tenant_id, groupId: r.group_id, edgeNode: r.edge_node, device: r.device, bdSeq: numOrNull(r.bd_seq), metrics, bornAt: Number(r.born_at), deadAt: numOrNull(r.dead_at), needsRebirth: r.needs_rebirth };
}

/** Group id -> owning tenant. */
export async function loadSparkplugGroups(sequelize: Sequelize): Promise<Map<string, number>> {
  const rows = await sequelize.query<{ group_id: string; tenant_id: number }>("SELECT group_id, tenant_id FROM sparkplug_groups", { type: QueryTypes.SELECT });
  return new Map(rows.map((r) => [r.group_id, r.tenant_id]));
}

export async function loadSparkplugMappings(sequelize: Sequelize): Promise<LoopMapping[]> {
  const rows = await sequelize.query<MappingRow>("SELECT loop_id, tenant_id, group_id, edge_node, device, sp_metric, pv_metric, mv_metric, mode_metric FROM sparkplug_mappings", { type: QueryTypes.SELECT });
  return rows.map(toMapping);
}

export async function loadSparkplugBirths(sequelize: Sequelize): Promise<(BirthRecord & { tenantId: number })[]> {
  const rows = await sequelize.query<BirthRow>("SELECT * FROM sparkplug_births", { type: QueryTypes.SELECT });
  return rows.map(toBirth);
}

/** Upsert births (with their held values, death time and rebirth flag). */
export async function saveSparkplugBirths(sequelize: Sequelize, rows: readonly { tenantId: number; record: BirthRecord }[]): Promise<void> {
  if (rows.length === 0) return;
  const values = rows.map(({ tenantId, record: r }) => [tenantId, r.groupId, r.edgeNode, r.device, r.bdSeq, JSON.stringify(r.metrics), r.bornAt, r.deadAt, r.needsRebirth?.slice(0, 255) ?? null]);
  await sequelize.query(
    `INSERT INTO sparkplug_births (tenant_id, group_id, edge_node, device, bd_seq, metrics, born_at, dead_at, needs_rebirth) VALUES ${values.map(() => "(?)").join(", ")}
     ON DUPLICATE KEY UPDATE tenant_id = VALUES(tenant_id), bd_seq = VALUES(bd_seq), metrics = VALUES(metrics), born_at = VALUES(born_at), dead_at = VALUES(dead_at), needs_rebirth = VALUES(needs_rebirth)`,
    { replacements: values },
  );
}

/** The admin's view: the tenant's groups, the births seen under them, and the mappings of loops in scope. */
export async function sparkplugOverview(ctx: TenantContext): Promise<SparkplugOverviewDto> {
  const { sequelize } = getDb();
  const groups = await sequelize.query<{ group_id: string }>("SELECT group_id FROM sparkplug_groups WHERE tenant_id = ? ORDER BY group_id", { type: QueryTypes.SELECT, replacements: [ctx.tenantId] });
  const births = await sequelize.query<BirthRow>("SELECT * FROM sparkplug_births WHERE tenant_id = ? ORDER BY group_id, edge_node, device", { type: QueryTypes.SELECT, replacements: [ctx.tenantId] });
  const scope = siteScopeSql(ctx, "l.site_id");
  const mappings = await sequelize.query<MappingRow>(
    `SELECT m.*, l.tag FROM sparkplug_mappings m JOIN loops l ON l.id = m.loop_id AND l.tenant_id = m.tenant_id WHERE m.tenant_id = ?${scope.sql} ORDER BY l.tag`,
    { type: QueryTypes.SELECT, replacements: [ctx.tenantId, ...scope.args] },
  );
  const iso = (t: number | null) => (t === null ? null : new Date(t).toISOString());
  return {
    groups: groups.map((g) => g.group_id),
    sources: births.map(toBirth).map((b) => ({
      groupId: b.groupId,
      edgeNode: b.edgeNode,
      device: b.device,
      bdSeq: b.bdSeq,
      bornAt: iso(b.bornAt)!,
      deadAt: iso(b.deadAt),
      needsRebirth: b.needsRebirth,
      metrics: b.metrics.map((m) => ({ name: m.name, alias: m.alias, datatype: datatypeName(m.datatype), value: m.value ?? null })),
    })),
    mappings: mappings.map((r) => {
      const { tenantId: _tenant, ...rest } = toMapping(r);
      return { ...rest, loopTag: r.tag ?? "" };
    }),
  };
}

/** Claim a group id for the tenant: its Sparkplug traffic is then this tenant's, whatever broker carries it. */
export async function bindSparkplugGroup(ctx: TenantContext, input: { groupId: string; reason?: string }): Promise<void> {
  const { sequelize } = getDb();
  await inConfigTransaction(async (transaction) => {
    const [owner] = await sequelize.query<{ tenant_id: number }>("SELECT tenant_id FROM sparkplug_groups WHERE group_id = ? FOR UPDATE", { type: QueryTypes.SELECT, replacements: [input.groupId], transaction });
    if (owner) throw new ConflictError(owner.tenant_id === ctx.tenantId ? "This group id is already yours." : "This group id is not available.");
    const [id] = await sequelize.query("INSERT INTO sparkplug_groups (tenant_id, group_id, created_at) VALUES (?, ?, NOW(3))", { type: QueryTypes.INSERT, replacements: [ctx.tenantId, input.groupId], transaction });
    await logConfigChange(ctx, { entity: "sparkplug-group", entityId: Number(id), diff: { groupId: { from: null, to: input.groupId } }, reason: input.reason ?? null }, transaction);
  });
}

async function ownedLoop(ctx: TenantContext, loopId: number, transaction: Transaction): Promise<{ id: number; site_id: number }> {
  const [loop] = await getDb().sequelize.query<{ id: number; site_id: number }>("SELECT id, site_id FROM loops WHERE id = ? AND tenant_id = ?", { type: QueryTypes.SELECT, replacements: [loopId, ctx.tenantId], transaction });
  if (!loop || !siteVisible(ctx, loop.site_id)) throw new NotFoundError("Loop");
  return loop;
}

/**
 * Map a device's metrics to a loop (one mapping per loop; a new one replaces the old), checked
 * against the device's last birth, logged with the change.
 */
export async function saveSparkplugMapping(ctx: TenantContext, input: MappingInput): Promise<LoopMapping> {
  const { sequelize } = getDb();
  return inConfigTransaction(async (transaction) => {
    await ownedLoop(ctx, input.loopId, transaction);
    const [group] = await sequelize.query<{ tenant_id: number }>("SELECT tenant_id FROM sparkplug_groups WHERE group_id = ?", { type: QueryTypes.SELECT, replacements: [input.groupId], transaction });
    if (!group || group.tenant_id !== ctx.tenantId) throw new ValidationError("Check the mapping.", { groupId: "Bind this group id to your organisation first." });
    const [birth] = await sequelize.query<BirthRow>("SELECT * FROM sparkplug_births WHERE tenant_id = ? AND group_id = ? AND edge_node = ? AND device = ?", { type: QueryTypes.SELECT, replacements: [ctx.tenantId, input.groupId, input.edgeNode, input.device], transaction });
    const errors = checkMappingAgainstBirth(input, birth ? toBirth(birth) : null);
    if (Object.keys(errors).length > 0) throw new ValidationError("Check the mapping.", errors);
    const [old] = await sequelize.query<MappingRow>("SELECT * FROM sparkplug_mappings WHERE loop_id = ? FOR UPDATE", { type: QueryTypes.SELECT, replacements: [input.loopId], transaction });
    const next: LoopMapping = { loopId: input.loopId, tenantId: ctx.tenantId, groupId: input.groupId, edgeNode: input.edgeNode, device: input.device, sp: input.sp, pv: input.pv, mv: input.mv, mode: input.mode };
    await sequelize.query(
      `INSERT INTO sparkplug_mappings (tenant_id, loop_id, group_id, edge_node, device, sp_metric, pv_metric, mv_metric, mode_metric, updated_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, NOW(3))
       ON DUPLICATE KEY UPDATE group_id = VALUES(group_id), edge_node = VALUES(edge_node), device = VALUES(device), sp_metric = VALUES(sp_metric), pv_metric = VALUES(pv_metric), mv_metric = VALUES(mv_metric), mode_metric = VALUES(mode_metric), updated_at = NOW(3)`,
      { replacements: [ctx.tenantId, next.loopId, next.groupId, next.edgeNode, next.device, next.sp, next.pv, next.mv, next.mode], transaction },
    );
    const { loopId: _l, tenantId: _t, ...after } = next;
    const before = old ? (({ loopId: _a, tenantId: _b, ...rest }) => rest)(toMapping(old)) : {};
    await logConfigChange(ctx, { entity: "sparkplug-mapping", entityId: input.loopId, diff: diffOf(before, after), reason: input.reason ?? null }, transaction);
    return next;
  });
}

export async function deleteSparkplugMapping(ctx: TenantContext, loopId: number, reason?: string): Promise<void> {
  const { sequelize } = getDb();
  await inConfigTransaction(async (transaction) => {
    await ownedLoop(ctx, loopId, transaction);
    const [old] = await sequelize.query<MappingRow>("SELECT * FROM sparkplug_mappings WHERE loop_id = ? AND tenant_id = ? FOR UPDATE", { type: QueryTypes.SELECT, replacements: [loopId, ctx.tenantId], transaction });
    if (!old) throw new NotFoundError("Mapping");
    await sequelize.query("DELETE FROM sparkplug_mappings WHERE loop_id = ? AND tenant_id = ?", { replacements: [loopId, ctx.tenantId], transaction });
    const { loopId: _l, tenantId: _t, ...before } = toMapping(old);
    await logConfigChange(ctx, { entity: "sparkplug-mapping", entityId: loopId, diff: diffOf(before, Object.fromEntries(Object.keys(before).map((k) => [k, null]))), reason: reason ?? null }, transaction);
  });
}

/**
 * The demo's Sparkplug side (lib/seed): each demo tenant owns its slug as group id and every demo
 * loop is mapped to the simulators' device for it, so `--protocol sparkplug` feeds the same loops.
 * Existing rows are kept (idempotent).
 */
export async function seedSparkplugDemo(sequelize: Sequelize, transaction: Transaction, groups: { tenantId: number; groupId: string }[], mappings: Omit<LoopMapping, "sp" | "pv" | "mv" | "mode">[]): Promise<number> {
  let created = 0;
  for (const g of groups) {
    const [, n] = await sequelize.query("INSERT IGNORE INTO sparkplug_groups (tenant_id, group_id, created_at) VALUES (?, ?, NOW(3))", { replacements: [g.tenantId, g.groupId], transaction });
    created += Number(n) || 0;
  }
  for (const m of mappings) {
    const [, n] = await sequelize.query(
      "INSERT IGNORE INTO sparkplug_mappings (tenant_id, loop_id, group_id, edge_node, device, sp_metric, pv_metric, mv_metric, mode_metric, updated_at) VALUES (?, ?, ?, ?, ?, 'SP', 'PV', 'MV', 'MODE', NOW(3))",
      { replacements: [m.tenantId, m.loopId, m.groupId, m.edgeNode, m.device], transaction },
    );
    created += Number(n) || 0;
  }
  return created;
}
