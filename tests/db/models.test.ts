import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { UniqueConstraintError, ForeignKeyConstraintError, ValidationError as SequelizeValidationError } from "sequelize";
import { tuningSeconds } from "@/models";
import { createTestDatabase, type TestDatabase } from "@/tests/setup/db";
import { testLoopRow } from "@/tests/helpers/loop-row";

let db: TestDatabase;
beforeAll(async () => {
  db = await createTestDatabase("models");
});
afterAll(async () => {
  await db?.drop();
});

async function tenantWithLoop(slug: string) {
  const { Tenant, Site, Area, Loop } = db.models;
  const tenant = await Tenant.create({ slug, name: `Tenant ${slug}` });
  const site = await Site.create({ tenantId: tenant.id, slug: "north", name: "North Works" });
  const area = await Area.create({ tenantId: tenant.id, siteId: site.id, slug: "units", name: "Units" });
  const loop = await Loop.create(
    testLoopRow({ tenantId: tenant.id, siteId: site.id, areaId: area.id }, {
      tag: "FIC-7",
      slug: "fic-7",
      telemetryPeriodS: 0.5,
      controllerPeriodS: 0.5,
      gainValue: 1.2,
      tiValue: 6,
    }),
  );
  return { tenant, site, area, loop };
}

async function rawError(sql: string, replacements: unknown[] = []): Promise<string> {
  try {
    await db.sequelize.query(sql, { replacements });
  } catch (e) {
    return (e as Error).message;
  }
  return "no error";
}

describe("unique keys", () => {
  it("refuse a second tenant with the same slug, a second user with the same e-mail (case-insensitive), and a second membership", async () => {
    const { tenant } = await tenantWithLoop("uq-a");
    await expect(db.models.Tenant.create({ slug: "uq-a", name: "Other" })).rejects.toBeInstanceOf(UniqueConstraintError);
    const u = await db.models.User.create({ email: "Pat@Example.test", name: "Pat", passwordHash: null });
    expect(u.email).toBe("pat@example.test");
    await expect(db.models.User.create({ email: "pat@example.test", name: "Pat 2", passwordHash: null })).rejects.toBeInstanceOf(
      UniqueConstraintError,
    );
    await db.models.Membership.create({ userId: u.id, tenantId: tenant.id, role: "viewer" });
    await expect(db.models.Membership.create({ userId: u.id, tenantId: tenant.id, role: "admin" })).rejects.toBeInstanceOf(
      UniqueConstraintError,
    );
  });

  it("allow the same loop slug in two sites but not twice in one site", async () => {
    const { tenant, site, loop } = await tenantWithLoop("uq-b");
    const other = await db.models.Site.create({ tenantId: tenant.id, slug: "south", name: "South Works" });
    const { id: _id, createdAt: _c, updatedAt: _u, ...fields } = loop.get({ plain: true });
    await expect(db.models.Loop.create({ ...fields, siteId: other.id, areaId: null })).resolves.toBeTruthy();
    await expect(db.models.Loop.create({ ...fields, siteId: site.id })).rejects.toBeInstanceOf(UniqueConstraintError);
  });

  it("keep one alarm point per loop and condition, and one policy per scope", async () => {
    const { tenant, loop } = await tenantWithLoop("uq-c");
    const base = { tenantId: tenant.id, loopId: loop.id, condition: "margin" as const, priority: "high" as const };
    await db.models.Alarm.create(base);
    await expect(db.models.Alarm.create({ ...base, priority: "low" })).rejects.toBeInstanceOf(UniqueConstraintError);
    const p = { tenantId: tenant.id, scope: "loop" as const, scopeId: loop.id, settings: {}, updatedBy: null };
    await db.models.AlarmPolicy.create(p);
    await expect(db.models.AlarmPolicy.create(p)).rejects.toBeInstanceOf(UniqueConstraintError);
  });
});

describe("foreign keys", () => {
  it("refuse a site of a tenant that does not exist", async () => {
    await expect(db.models.Site.create({ tenantId: 987654, slug: "ghost", name: "Ghost" })).rejects.toBeInstanceOf(
      ForeignKeyConstraintError,
    );
  });

  it("cascade a tenant's deletion to its sites, areas and loops when no alarm history exists", async () => {
    const { tenant, site, loop } = await tenantWithLoop("fk-a");
    await tenant.destroy();
    expect(await db.models.Site.findByPk(site.id)).toBeNull();
    expect(await db.models.Loop.findByPk(loop.id)).toBeNull();
  });
});

describe("enums and validation", () => {
  it("refuse an unknown role in the model and in SQL (strict mode)", async () => {
    const { tenant } = await tenantWithLoop("en-a");
    const u = await db.models.User.create({ email: "enum@example.test", name: "E", passwordHash: null });
    await expect(
      db.models.Membership.create({ userId: u.id, tenantId: tenant.id, role: "superuser" as never }),
    ).rejects.toBeInstanceOf(SequelizeValidationError);
    const msg = await rawError("INSERT INTO memberships (user_id, tenant_id, role) VALUES (?, ?, 'superuser')", [u.id, tenant.id]);
    expect(msg).toMatch(/truncated|incorrect|invalid/i);
  });

  it("refuses a loop whose PV range is inverted or whose slug is not a topic segment", async () => {
    const { loop } = await tenantWithLoop("en-b");
    loop.pvLo = 50;
    loop.pvHi = 10;
    await expect(loop.save()).rejects.toThrow(/pvHi must be greater than pvLo/);
    await loop.reload();
    loop.slug = "FIC 7";
    await expect(loop.save()).rejects.toBeInstanceOf(SequelizeValidationError);
  });
});

describe("the alarm event log is append-only", () => {
  it("accepts inserts, refuses UPDATE and DELETE (even for root), and refuses a replayed journal id", async () => {
    const { tenant, loop } = await tenantWithLoop("ev-a");
    const alarm = await db.models.Alarm.create({ tenantId: tenant.id, loopId: loop.id, condition: "unstable", priority: "urgent" });
    const ev = await db.models.AlarmEvent.create({
      tenantId: tenant.id,
      alarmId: alarm.id,
      loopId: loop.id,
      journalId: "j-000001",
      at: new Date("2026-12-01T10:00:00.123Z"),
      kind: "activate",
      fromState: "normal",
      toState: "unacknowledged",
      userId: null,
      comment: null,
      data: { radius: 1.002 },
    });
    const back = await db.models.AlarmEvent.findByPk(ev.id);
    expect(back?.at.toISOString()).toBe("2026-12-01T10:00:00.123Z");
    expect(back?.data).toEqual({ radius: 1.002 });

    expect(await rawError("UPDATE alarm_events SET comment = 'edited' WHERE id = ?", [ev.id])).toMatch(/append-only: UPDATE refused/);
    expect(await rawError("DELETE FROM alarm_events WHERE id = ?", [ev.id])).toMatch(/append-only: DELETE refused/);
    await expect(ev.update({ comment: "edited" })).rejects.toThrow(/append-only/);
    await expect(
      db.models.AlarmEvent.create({ ...ev.get({ plain: true }), id: undefined as never, kind: "again" }),
    ).rejects.toBeInstanceOf(UniqueConstraintError);
    // The history protects itself from cascades too: the alarm (and its loop) cannot be deleted.
    await expect(alarm.destroy()).rejects.toBeInstanceOf(ForeignKeyConstraintError);
    expect(await db.models.AlarmEvent.count({ where: { alarmId: alarm.id } })).toBe(1);
  });
});

describe("stored types come back as written", () => {
  it("JSON columns as objects, BIGINT epoch ms as numbers, DATETIME(3) with milliseconds", async () => {
    const { tenant, loop } = await tenantWithLoop("ty-a");
    const t = Date.UTC(2026, 11, 1, 12, 0, 0, 7);
    await db.models.LoopState.create({
      loopId: loop.id,
      tenantId: tenant.id,
      trackerState: "tracking",
      latest: { loopId: loop.id, spectralRadius: 0.93 } as never,
      at: t,
    });
    const s = await db.models.LoopState.findByPk(loop.id);
    expect(s?.at).toBe(t);
    expect(typeof s?.at).toBe("number");
    expect((s?.latest as unknown as { spectralRadius: number }).spectralRadius).toBe(0.93);
    const rule = await db.models.NotificationRule.create({
      tenantId: tenant.id,
      areaId: null,
      name: "r",
      recipients: ["a@example.test", "b@example.test"],
      escalationMinutes: null,
      repeatMinutes: null,
    });
    expect((await db.models.NotificationRule.findByPk(rule.id))?.recipients).toEqual(["a@example.test", "b@example.test"]);
  });

  it("hides password hashes unless asked for", async () => {
    await db.models.User.create({ email: "hash@example.test", name: "H", passwordHash: "$2b$10$abcdefghijklmnopqrstuv" });
    const plain = await db.models.User.findOne({ where: { email: "hash@example.test" } });
    expect(plain?.get("passwordHash")).toBeUndefined();
    const withHash = await db.models.User.scope("withPassword").findOne({ where: { email: "hash@example.test" } });
    expect(withHash?.passwordHash).toBe("$2b$10$abcdefghijklmnopqrstuv");
  });
});

describe("tuningSeconds converts the units sites write (common practice)", () => {
  it.each([
    // PB 50 % is a gain of 100/50 = 2; Ti 2 min = 120 s; 0.5 repeats/min = Ti 120 s; Td 0.5 min = 30 s
    [{ gainKind: "pb", gainValue: 50, tiValue: 2, tiUnits: "min" }, { kp: 2, ti: 120, td: 0, tf: 0 }],
    [{ gainKind: "gain", gainValue: 0.8, tiValue: 0.5, tiUnits: "repeats-per-min" }, { kp: 0.8, ti: 120, td: 0, tf: 0 }],
    [{ gainValue: 3, tiValue: null, tdValue: 0.5, tdUnits: "min", derivativeAlpha: 0.125 }, { kp: 3, ti: null, td: 30, tf: 3.75 }],
    [{ gainValue: 1, tiValue: 10, tdValue: 4, tfS: 0.5 }, { kp: 1, ti: 10, td: 4, tf: 0.5 }],
    [{ gainValue: 1, tiValue: 10, tdValue: 4 }, { kp: 1, ti: 10, td: 4, tf: 0.4 }],
  ] as const)("%o", (input, expected) => {
    const out = tuningSeconds(input as never);
    expect(out.kp).toBeCloseTo(expected.kp, 12);
    if (expected.ti === null) expect(out.ti).toBeNull();
    else expect(out.ti).toBeCloseTo(expected.ti, 9);
    expect(out.td).toBeCloseTo(expected.td, 12);
    expect(out.tf).toBeCloseTo(expected.tf, 12);
  });

  it("refuses a zero gain or band", () => {
    expect(() => tuningSeconds({ gainValue: 0 })).toThrow(RangeError);
  });
});

describe("time columns have database defaults", () => {
  it("a raw INSERT without timestamps gets the current UTC time with milliseconds", async () => {
    const before = Date.now();
    await db.sequelize.query("INSERT INTO tenants (slug, name) VALUES ('raw-ts', 'Raw')");
    const row = await db.models.Tenant.findOne({ where: { slug: "raw-ts" } });
    const created = row?.createdAt.getTime() ?? 0;
    expect(created).toBeGreaterThanOrEqual(before - 2000);
    expect(created).toBeLessThanOrEqual(Date.now() + 2000);
  });
});
