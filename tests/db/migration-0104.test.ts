/**
 * Migration 0104 on a database that still has the `sluggish` operator alarm: an active one and
 * one suppressed by design are closed (returned to normal with a `retire` event that says where
 * the condition went; the open occurrence ends), their history stays readable, a point without
 * history goes; stored policies lose the sluggish fields, a tenant's multiple becomes the
 * work-list setting, and every change is in the configuration change log; down() puts the
 * policy fields back. (ISA-18.2: an alarm leaves the active list only with a recorded return to
 * normal — common practice.)
 */
import { QueryTypes } from "sequelize";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { migrateDown, migrateUp, migrationStatus } from "@/lib/data/db/migrate";
import { readAlarmPoints } from "@/lib/data/alarms/store";
import { normalizeStoredSettings, parsePolicyOverride } from "@/lib/domain/alarms/policy";
import { loopTimeline } from "@/lib/reports/timeline";
import { createEmptyDatabase } from "@/tests/setup/db";

type Db = Awaited<ReturnType<typeof createEmptyDatabase>>;
let db: Db;
const MIGRATION = "0104-sluggish-to-work-list";

const q = async <T,>(sql: string, replacements: unknown[] = []) => (await db.sequelize.query(sql, { replacements, type: QueryTypes.SELECT })) as T[];
const exec = async (sql: string, replacements: unknown[] = []) => (await db.sequelize.query(sql, { replacements })) as unknown as [number, unknown];
const json = (v: unknown) => (typeof v === "string" ? (JSON.parse(v) as Record<string, unknown>) : (v as Record<string, unknown>));

const ids = { tenant: 0, site: 0, loops: [] as number[], active: 0, suppressed: 0, idle: 0, margin: 0, policies: { tenant: 0, site: 0, loop: 0 } };

async function alarm(loopId: number, condition: string, state: string, active: boolean, open: boolean): Promise<number> {
  const [id] = await exec(
    "INSERT INTO alarms (tenant_id, loop_id, `condition`, priority, state, active, occurrence_open, message, changed_at, created_at, updated_at) VALUES (?,?,?,'low',?,?,?,'',UTC_TIMESTAMP(3),UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))",
    [ids.tenant, loopId, condition, state, active, open],
  );
  return Number(id);
}

async function policy(scope: string, scopeId: number, settings: object): Promise<number> {
  const [id] = await exec("INSERT INTO alarm_policies (tenant_id, scope, scope_id, settings, created_at, updated_at) VALUES (?,?,?,?,UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))", [
    ids.tenant,
    scope,
    scopeId,
    JSON.stringify(settings),
  ]);
  return Number(id);
}

beforeAll(async () => {
  db = await createEmptyDatabase("mig0104");
  await migrateUp(db.sequelize);
  // Back to the schema before 0104 (the later migrations come down with it and go up again after).
  await migrateDown(db.sequelize, MIGRATION);
  expect((await migrationStatus(db.sequelize)).pending[0]).toBe(MIGRATION);

  // An invented tenant with three loops (raw INSERTs of the columns that matter here).
  ids.tenant = Number((await exec("INSERT INTO tenants (slug, name, created_at, updated_at) VALUES ('fenmoor-chem','Fenmoor Chemicals',UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))"))[0]);
  ids.site = Number(
    (await exec("INSERT INTO sites (tenant_id, slug, name, created_at, updated_at) VALUES (?,'dyke-end','Dyke End',UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))", [ids.tenant]))[0],
  );
  for (const tag of ["FIC-310", "LIC-311", "TIC-312"]) {
    const [id] = await exec(
      `INSERT INTO loops (tenant_id, site_id, tag, slug, kind, units, pv_lo, pv_hi, telemetry_period_s, controller_period_s, gain_value, ti_value,
        estimation_period_s, baseline_time_constant_s, created_at, updated_at)
       VALUES (?,?,?,?,'flow','m3/h',0,100,1,1,1,10,1,30,UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))`,
      [ids.tenant, ids.site, tag, tag.toLowerCase()],
    );
    ids.loops.push(Number(id));
  }
  const [l1, l2, l3] = ids.loops as [number, number, number];
  // FIC-310: an active, unacknowledged sluggish alarm with an open occurrence and its raise event.
  ids.active = await alarm(l1, "sluggish", "unacknowledged", true, true);
  await exec("INSERT INTO alarm_occurrences (alarm_id, tenant_id, loop_id, `condition`, priority, started_at) VALUES (?,?,?,'sluggish','low',UTC_TIMESTAMP(3) - INTERVAL 1 HOUR)", [
    ids.active,
    ids.tenant,
    l1,
  ]);
  await exec(
    "INSERT INTO alarm_events (tenant_id, alarm_id, loop_id, journal_id, at, kind, from_state, to_state, comment) VALUES (?,?,?,'0000000000000007',UTC_TIMESTAMP(3) - INTERVAL 1 HOUR,'activate','normal','unacknowledged',NULL)",
    [ids.tenant, ids.active, l1],
  );
  ids.margin = await alarm(l1, "margin", "normal", false, false);
  // LIC-311: sluggish suppressed by design (the policy had it off), with its suppress event.
  ids.suppressed = await alarm(l2, "sluggish", "suppressed-by-design", false, false);
  await exec(
    "INSERT INTO alarm_events (tenant_id, alarm_id, loop_id, journal_id, at, kind, from_state, to_state, comment) VALUES (?,?,?,'0000000000000008',UTC_TIMESTAMP(3),'suppress','normal','suppressed-by-design','disabled by policy')",
    [ids.tenant, ids.suppressed, l2],
  );
  // TIC-312: a sluggish point that never did anything.
  ids.idle = await alarm(l3, "sluggish", "normal", false, false);

  ids.policies.tenant = await policy("tenant", ids.tenant, {
    decayRatio: { low: 0.3, high: 0.45 },
    sluggishMultiple: 4,
    deadband: { decayRatio: 0.03, sluggish: 0.1 },
    enabled: { margin: true, sluggish: true },
  });
  ids.policies.site = await policy("site", ids.site, { sluggishMultiple: 5, onDelayS: 45 });
  ids.policies.loop = await policy("loop", l1, { onDelayS: 10 });

  expect(await migrateUp(db.sequelize)).toContain(MIGRATION);
}, 120_000);

afterAll(async () => {
  await db?.drop();
});

describe("migration 0104: the sluggish alarm moves to the engineering work list", () => {
  it("closes the active sluggish alarm: normal, inactive, a retire event saying where it went, the occurrence ended", async () => {
    const [row] = await q<{ state: string; active: number; occurrence_open: number; message: string }>("SELECT state, active, occurrence_open, message FROM alarms WHERE id = ?", [ids.active]);
    expect(row).toMatchObject({ state: "normal", active: 0, occurrence_open: 0 });
    expect(row!.message).toMatch(/engineering work list/);
    const events = await q<{ kind: string; from_state: string; to_state: string; user_id: number | null; comment: string }>(
      "SELECT kind, from_state, to_state, user_id, comment FROM alarm_events WHERE alarm_id = ? ORDER BY id",
      [ids.active],
    );
    // the history stays: the raise, then the retirement
    expect(events.map((e) => e.kind)).toEqual(["activate", "retire"]);
    expect(events[1]).toMatchObject({ from_state: "unacknowledged", to_state: "normal", user_id: null });
    expect(events[1]!.comment).toMatch(/no longer an operator alarm.*sluggish-tuning finding on the engineering work list/);
    const occ = await q<{ ended_at: Date | null }>("SELECT ended_at FROM alarm_occurrences WHERE alarm_id = ?", [ids.active]);
    expect(occ).toHaveLength(1);
    expect(occ[0]!.ended_at).not.toBeNull();
  });

  it("closes a sluggish point suppressed by design the same way; removes one with no history; leaves other conditions alone", async () => {
    const [s] = await q<{ state: string }>("SELECT state FROM alarms WHERE id = ?", [ids.suppressed]);
    expect(s!.state).toBe("normal");
    const kinds = await q<{ kind: string; from_state: string }>("SELECT kind, from_state FROM alarm_events WHERE alarm_id = ? ORDER BY id", [ids.suppressed]);
    expect(kinds).toEqual([
      { kind: "suppress", from_state: "normal" },
      { kind: "retire", from_state: "suppressed-by-design" },
    ]);
    expect(await q("SELECT id FROM alarms WHERE id = ?", [ids.idle])).toEqual([]);
    expect(await q<{ state: string }>("SELECT state FROM alarms WHERE id = ?", [ids.margin])).toEqual([{ state: "normal" }]);
  });

  it("the alarm service no longer loads a sluggish point; the rows stay for the history view", async () => {
    const points = await readAlarmPoints(db.sequelize, Date.now());
    expect(points.map((p) => p.id)).toEqual([ids.margin]);
    const kept = await q<{ id: number }>("SELECT id FROM alarms WHERE `condition` = 'sluggish' ORDER BY id");
    expect(kept.map((r) => r.id)).toEqual([ids.active, ids.suppressed]);
  });

  it("the loop's timeline (the history view) shows the retired condition as such, with the note", async () => {
    const items = await loopTimeline({ tenantId: ids.tenant }, ids.loops[0]!, Date.now() - 3 * 3600_000, Date.now() + 60_000, 50, db.sequelize);
    const alarms = items.filter((i) => i.kind === "alarm");
    expect(alarms.map((i) => i.title)).toEqual([
      "sluggish (retired condition) alarm retired (moved to the engineering work list) (normal)",
      "sluggish (retired condition) alarm raised (unacknowledged)",
    ]);
    expect(alarms[0]!.detail).toMatch(/engineering work list/);
  });

  it("stored policies lose the sluggish fields and still parse; the tenant's multiple is now its work-list setting", async () => {
    const rows = await q<{ id: number; scope: "tenant" | "site" | "loop"; settings: unknown }>("SELECT id, scope, settings FROM alarm_policies ORDER BY id");
    const by = new Map(rows.map((r) => [r.id, r]));
    expect(json(by.get(ids.policies.tenant)!.settings)).toEqual({ decayRatio: { low: 0.3, high: 0.45 }, deadband: { decayRatio: 0.03 }, enabled: { margin: true } });
    expect(json(by.get(ids.policies.site)!.settings)).toEqual({ onDelayS: 45 });
    expect(json(by.get(ids.policies.loop)!.settings)).toEqual({ onDelayS: 10 });
    for (const r of rows) expect(() => parsePolicyOverride(r.scope, normalizeStoredSettings(r.settings))).not.toThrow();
    expect(await q("SELECT tenant_id, sluggish_multiple FROM work_list_settings")).toEqual([{ tenant_id: ids.tenant, sluggish_multiple: 4 }]);
  });

  it("every policy change is in the configuration change log with the removed values; an unchanged policy has none", async () => {
    const log = await q<{ entity_id: number; diff: unknown; reason: string; user_id: number | null }>(
      "SELECT entity_id, diff, reason, user_id FROM config_changes WHERE entity = 'alarm_policy' ORDER BY id",
    );
    expect(log.map((l) => l.entity_id)).toEqual([ids.policies.tenant, ids.policies.site]);
    expect(json(log[0]!.diff)).toMatchObject({ sluggishMultiple: { from: 4, to: null }, "deadband.sluggish": { from: 0.1, to: null }, "enabled.sluggish": { from: true, to: null } });
    expect(log[0]!.reason).toMatch(/moved to the engineering work list.*multiple 4 is now the tenant's work-list setting/);
    expect(json(log[1]!.diff)).toMatchObject({ sluggishMultiple: { from: 5, to: null } });
    expect(log[1]!.reason).toMatch(/site multiple 5 is kept here for the record/);
    expect(log.every((l) => l.user_id === null)).toBe(true);
  });

  it("down() puts the policy fields back and drops the setting; up() again changes nothing more in the alarms", async () => {
    await migrateDown(db.sequelize, MIGRATION);
    const [t] = await q<{ settings: unknown }>("SELECT settings FROM alarm_policies WHERE id = ?", [ids.policies.tenant]);
    expect(json(t!.settings)).toEqual({
      decayRatio: { low: 0.3, high: 0.45 },
      sluggishMultiple: 4,
      deadband: { decayRatio: 0.03, sluggish: 0.1 },
      enabled: { margin: true, sluggish: true },
    });
    const [s] = await q<{ settings: unknown }>("SELECT settings FROM alarm_policies WHERE id = ?", [ids.policies.site]);
    expect(json(s!.settings)).toEqual({ onDelayS: 45, sluggishMultiple: 5 });
    await migrateUp(db.sequelize);
    const retires = await q<{ n: number }>("SELECT COUNT(*) AS n FROM alarm_events WHERE kind = 'retire'");
    expect(Number(retires[0]!.n)).toBe(2);
    expect(await q("SELECT sluggish_multiple FROM work_list_settings")).toEqual([{ sluggish_multiple: 4 }]);
  }, 120_000);
});
