/**
 * The configuration change log (config_changes): who changed what, from what to what, why, and
 * under which management-of-change reference. Every admin and engineer write goes through here,
 * and always inside the transaction of the change itself (`inConfigTransaction`): the change and
 * its log row commit together or not at all, so no configuration changes without a trace.
 */
import type { Transaction } from "sequelize";
import { getDb } from "@/lib/data/db/sequelize";
import type { TenantContext } from "@/lib/domain/types";

export interface ConfigChangeDto {
  id: number;
  at: string;
  userId: number | null;
  userName: string | null;
  entity: string;
  entityId: number;
  diff: Record<string, { from: unknown; to: unknown }>;
  reason: string | null;
  mocReference: string | null;
}

/** Fields whose value differs between `before` and `after` (only keys of `after`). */
export function diffOf(before: Record<string, unknown>, after: Record<string, unknown>): Record<string, { from: unknown; to: unknown }> {
  const out: Record<string, { from: unknown; to: unknown }> = {};
  for (const [k, to] of Object.entries(after)) {
    const from = before[k];
    if (JSON.stringify(from ?? null) !== JSON.stringify(to ?? null)) out[k] = { from: from ?? null, to: to ?? null };
  }
  return out;
}

/** One configuration change as the log records it. */
export interface ConfigChangeEntry {
  entity: string;
  entityId: number;
  diff: Record<string, { from: unknown; to: unknown }>;
  reason?: string | null;
  mocReference?: string | null;
}

export async function logConfigChange(
  ctx: TenantContext,
  entry: ConfigChangeEntry,
  transaction: Transaction,
): Promise<void> {
  const { ConfigChange } = getDb().models;
  await ConfigChange.create(
    {
      tenantId: ctx.tenantId,
      userId: ctx.userId,
      entity: entry.entity,
      entityId: entry.entityId,
      diff: entry.diff,
      reason: entry.reason ?? null,
      mocReference: entry.mocReference ?? null,
    },
    { transaction },
  );
}

/** Run a configuration change and its change-log entry in one transaction (both or neither). */
export function inConfigTransaction<T>(fn: (transaction: Transaction) => Promise<T>): Promise<T> {
  return getDb().sequelize.transaction(fn);
}

export async function listConfigChanges(ctx: TenantContext, filter: { entity?: string; entityId?: number; limit?: number } = {}): Promise<ConfigChangeDto[]> {
  const { ConfigChange, User } = getDb().models;
  const where: Record<string, unknown> = { tenantId: ctx.tenantId };
  if (filter.entity) where.entity = filter.entity;
  if (filter.entityId !== undefined) where.entityId = filter.entityId;
  const rows = await ConfigChange.findAll({
    where,
    order: [["at", "DESC"], ["id", "DESC"]],
    limit: Math.min(500, filter.limit ?? 100),
    include: [{ model: User, as: "user", attributes: ["id", "name"] }],
  });
  return rows.map((r) => {
    const u = (r as unknown as { user?: { name: string } | null }).user;
    return {
      id: r.id,
      at: new Date(r.at).toISOString(),
      userId: r.userId,
      userName: u?.name ?? null,
      entity: r.entity,
      entityId: r.entityId,
      diff: r.diff,
      reason: r.reason,
      mocReference: r.mocReference,
    };
  });
}
