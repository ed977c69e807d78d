/**
 * Data layer of the work list's engineering settings (`work_list_settings`, migration 0104): one
 * row per tenant; a tenant without a row has the defaults. Node only; the rules live in
 * lib/work-list/settings.ts.
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { getDb } from "@/lib/data/db/sequelize";

export interface WorkListSettingsRow {
  sluggishMultiple: number;
  updatedAt: Date | null;
  updatedBy: string | null;
}

/** The tenant's stored settings, or null without a row. */
export async function selectWorkListSettings(tenantId: number): Promise<WorkListSettingsRow | null> {
  const [r] = await getDb().sequelize.query<{ sluggish_multiple: number; updated_at: Date; name: string | null }>(
    "SELECT s.sluggish_multiple, s.updated_at, u.name FROM work_list_settings s LEFT JOIN users u ON u.id = s.updated_by WHERE s.tenant_id = ?",
    { replacements: [tenantId], type: QueryTypes.SELECT },
  );
  return r ? { sluggishMultiple: Number(r.sluggish_multiple), updatedAt: r.updated_at, updatedBy: r.name } : null;
}

/** Store the tenant's settings and log the change (entity `work_list_settings`) in one transaction. */
export async function upsertWorkListSettings(
  tenantId: number,
  userId: number,
  next: { sluggishMultiple: number },
  before: { sluggishMultiple: number },
  reason: string,
): Promise<void> {
  const sequelize = getDb().sequelize;
  await sequelize.transaction(async (transaction) => {
    await sequelize.query(
      "INSERT INTO work_list_settings (tenant_id, sluggish_multiple, updated_by, updated_at) VALUES (?,?,?,UTC_TIMESTAMP(3)) " +
        "ON DUPLICATE KEY UPDATE sluggish_multiple = VALUES(sluggish_multiple), updated_by = VALUES(updated_by), updated_at = VALUES(updated_at)",
      { replacements: [tenantId, next.sluggishMultiple, userId], transaction },
    );
    await sequelize.query(
      "INSERT INTO config_changes (tenant_id, user_id, entity, entity_id, diff, reason, moc_reference, at) VALUES (?,?,'work_list_settings',?,?,?,NULL,UTC_TIMESTAMP(3))",
      { replacements: [tenantId, userId, tenantId, JSON.stringify({ sluggishMultiple: { from: before.sluggishMultiple, to: next.sluggishMultiple } }), reason], transaction },
    );
  });
}

/** Every tenant's sluggish-tuning multiple (tenants without a row are absent: the default applies). */
export async function selectSluggishMultiples(sequelize: Sequelize): Promise<Map<number, number>> {
  const rows = await sequelize.query<{ tenant_id: number; sluggish_multiple: number }>("SELECT tenant_id, sluggish_multiple FROM work_list_settings", {
    type: QueryTypes.SELECT,
  });
  return new Map(rows.map((r) => [Number(r.tenant_id), Number(r.sluggish_multiple)]));
}
