/**
 * The `sluggish` condition leaves the operator alarms for the engineering work list: a slow
 * set-point response calls for retuning, not for an operator's response (ISA-18.2), and is the
 * loop assessment's sluggish-tuning finding now (lib/assessment/model-check.ts).
 *
 * - `work_list_settings`: one row per tenant with the engineering settings of the work list;
 *   `sluggish_multiple` is the finding's level (× the loop's baseline time constant, default 3).
 * - Every `sluggish` alarm point that is not normal (active, unacknowledged, shelved, suppressed
 *   by design, out of service) returns to normal with a `retire` event in the append-only
 *   `alarm_events` whose comment says where the condition went; its open occurrence ends. The
 *   rows and their history stay readable (the enums keep the value); a point that never had an
 *   event or occurrence is removed. The alarm service no longer loads or raises the condition.
 * - Stored alarm policies lose `sluggishMultiple`, `deadband.sluggish` and `enabled.sluggish`; a
 *   tenant-scope multiple becomes the tenant's `sluggish_multiple`. Each change is written to
 *   `config_changes` (entity `alarm_policy`, the removed values in its diff), so nothing is lost:
 *   a site or loop multiple (the work-list setting is per tenant) stays there for the record.
 *
 * down(): the policy fields come back from those `config_changes` rows and the settings table is
 * dropped; the retire events stay (the event log is append-only) and the points stay normal.
 */
import { DataTypes, QueryTypes, type QueryInterface } from "sequelize";
import type { MigrationFn } from "@/lib/data/db/migrate";

const NOTE =
  "Retired by migration 0104: the sluggish condition is no longer an operator alarm. A slow set-point response is the " +
  "sluggish-tuning finding on the engineering work list (level: the tenant's multiple of the loop's baseline time constant).";
const REASON = "Migration 0104: the sluggish alarm condition moved to the engineering work list (sluggish-tuning finding)";
const DEFAULT_MULTIPLE = 3;

type Q = QueryInterface["sequelize"];

async function retireAlarms(db: Q): Promise<void> {
  const points = (await db.query(
    "SELECT id, tenant_id, loop_id, state, active, priority FROM alarms WHERE `condition` = 'sluggish' AND (state <> 'normal' OR active = 1 OR occurrence_open = 1)",
    { type: QueryTypes.SELECT },
  )) as { id: number; tenant_id: number; loop_id: number; state: string; active: number; priority: string }[];
  for (const p of points) {
    await db.query(
      "INSERT INTO alarm_events (tenant_id, alarm_id, loop_id, journal_id, at, kind, from_state, to_state, user_id, comment, data) VALUES (?,?,?,?,UTC_TIMESTAMP(3),'retire',?,'normal',NULL,?,?)",
      {
        replacements: [p.tenant_id, p.id, p.loop_id, `retire-0104-${p.id}`, p.state, NOTE, JSON.stringify({ migration: "0104", wasActive: Boolean(p.active), priority: p.priority })],
      },
    );
  }
  await db.query(
    `UPDATE alarms SET state = 'normal', active = 0, occurrence_open = 0, shelved_until = NULL, shelved_by = NULL, shelve_reason = NULL,
            suppressed_reason = NULL, out_of_service_reason = NULL, message = ?, changed_at = UTC_TIMESTAMP(3), version = version + 1, updated_at = UTC_TIMESTAMP(3)
      WHERE \`condition\` = 'sluggish' AND (state <> 'normal' OR active = 1 OR occurrence_open = 1)`,
    { replacements: [NOTE.slice(0, 500)] },
  );
  await db.query("UPDATE alarm_occurrences SET ended_at = UTC_TIMESTAMP(3) WHERE `condition` = 'sluggish' AND ended_at IS NULL");
  // Points that never did anything have no history to keep.
  await db.query(
    `DELETE FROM alarms WHERE \`condition\` = 'sluggish'
       AND NOT EXISTS (SELECT 1 FROM alarm_events e WHERE e.alarm_id = alarms.id)
       AND NOT EXISTS (SELECT 1 FROM alarm_occurrences o WHERE o.alarm_id = alarms.id)`,
  );
}

/** The settings without the retired fields, and what was removed (path -> value). */
function strip(settings: Record<string, unknown>): { kept: Record<string, unknown>; removed: Record<string, unknown> } {
  const kept: Record<string, unknown> = { ...settings };
  const removed: Record<string, unknown> = {};
  if ("sluggishMultiple" in kept) {
    removed.sluggishMultiple = kept.sluggishMultiple;
    delete kept.sluggishMultiple;
  }
  for (const k of ["deadband", "enabled"]) {
    const v = kept[k];
    if (v && typeof v === "object" && !Array.isArray(v) && "sluggish" in v) {
      const rest = { ...(v as Record<string, unknown>) };
      removed[`${k}.sluggish`] = rest.sluggish;
      delete rest.sluggish;
      kept[k] = rest;
    }
  }
  return { kept, removed };
}

const parse = (raw: unknown): unknown => (typeof raw === "string" ? (JSON.parse(raw) as unknown) : raw);

async function movePolicies(db: Q): Promise<void> {
  const rows = (await db.query("SELECT id, tenant_id, scope, scope_id, settings FROM alarm_policies", { type: QueryTypes.SELECT })) as {
    id: number;
    tenant_id: number;
    scope: string;
    settings: unknown;
  }[];
  for (const r of rows) {
    const settings = parse(r.settings);
    if (!settings || typeof settings !== "object" || Array.isArray(settings)) continue;
    const { kept, removed } = strip(settings as Record<string, unknown>);
    if (Object.keys(removed).length === 0) continue;
    const multiple = removed.sluggishMultiple;
    const carried = r.scope === "tenant" && typeof multiple === "number" && Number.isFinite(multiple) && multiple > 1 && multiple <= 100;
    if (carried) {
      await db.query(
        "INSERT INTO work_list_settings (tenant_id, sluggish_multiple, updated_at) VALUES (?,?,UTC_TIMESTAMP(3)) ON DUPLICATE KEY UPDATE sluggish_multiple = VALUES(sluggish_multiple)",
        { replacements: [r.tenant_id, multiple] },
      );
    }
    await db.query("UPDATE alarm_policies SET settings = ?, updated_at = UTC_TIMESTAMP(3) WHERE id = ?", { replacements: [JSON.stringify(kept), r.id] });
    const diff: Record<string, { from: unknown; to: unknown }> = {};
    for (const [path, v] of Object.entries(removed)) diff[path] = { from: v, to: null };
    diff.scope = { from: null, to: `${r.scope}:${String((r as { scope_id?: number }).scope_id)}` };
    const where = carried
      ? `; the multiple ${String(multiple)} is now the tenant's work-list setting`
      : typeof multiple === "number" && r.scope !== "tenant"
        ? `; the ${r.scope} multiple ${String(multiple)} is kept here for the record (the work-list setting is per tenant)`
        : "";
    await db.query(
      "INSERT INTO config_changes (tenant_id, user_id, entity, entity_id, diff, reason, moc_reference, at) VALUES (?,NULL,'alarm_policy',?,?,?,NULL,UTC_TIMESTAMP(3))",
      { replacements: [r.tenant_id, r.id, JSON.stringify(diff), REASON + where] },
    );
  }
}

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.createTable(
    "work_list_settings",
    {
      tenant_id: { type: DataTypes.INTEGER, allowNull: false, primaryKey: true, references: { model: "tenants", key: "id" }, onDelete: "CASCADE", onUpdate: "CASCADE" },
      /** The sluggish-tuning finding's level: × the loop's baseline time constant. */
      sluggish_multiple: { type: DataTypes.DOUBLE, allowNull: false, defaultValue: DEFAULT_MULTIPLE },
      updated_by: { type: DataTypes.INTEGER, allowNull: true, references: { model: "users", key: "id" }, onDelete: "SET NULL", onUpdate: "CASCADE" },
      updated_at: { type: DataTypes.DATE(3), allowNull: false, defaultValue: DataTypes.NOW },
    },
    { charset: "utf8mb4", collate: "utf8mb4_unicode_ci", engine: "InnoDB" },
  );
  await retireAlarms(qi.sequelize);
  await movePolicies(qi.sequelize);
};

export const down: MigrationFn = async ({ context: qi }) => {
  const db = qi.sequelize;
  const changes = (await db.query("SELECT entity_id, diff FROM config_changes WHERE entity = 'alarm_policy' AND reason LIKE ? ORDER BY id", {
    replacements: [`${REASON}%`],
    type: QueryTypes.SELECT,
  })) as { entity_id: number; diff: unknown }[];
  for (const c of changes) {
    const [row] = (await db.query("SELECT settings FROM alarm_policies WHERE id = ?", { replacements: [c.entity_id], type: QueryTypes.SELECT })) as { settings: unknown }[];
    if (!row) continue;
    const settings = { ...(parse(row.settings) as Record<string, unknown>) };
    for (const [path, d] of Object.entries(parse(c.diff) as Record<string, { from: unknown }>)) {
      if (path === "scope") continue;
      const [a, b] = path.split(".") as [string, string | undefined];
      if (b === undefined) settings[a] = d.from;
      else settings[a] = { ...((settings[a] as Record<string, unknown> | undefined) ?? {}), [b]: d.from };
    }
    await db.query("UPDATE alarm_policies SET settings = ? WHERE id = ?", { replacements: [JSON.stringify(settings), c.entity_id] });
  }
  await qi.dropTable("work_list_settings");
};
