import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { NotFoundError } from "@/lib/domain/errors";
import { assertOwned, findOwned, findOwnedOrThrow, scoped, tenantWhere } from "@/lib/data/tenancy";
import type { TenantContext } from "@/lib/domain/types";
import { createTestDatabase, type TestDatabase } from "@/tests/setup/db";

let db: TestDatabase;
const ids = { a: 0, b: 0, loopA: 0, loopB: 0, siteA: 0 };
const ctx = (tenantId: number): TenantContext => ({
  userId: 1,
  email: "x@example.test",
  name: "X",
  tenantId,
  tenantSlug: "x",
  tenantName: "X",
  role: "engineer",
});

beforeAll(async () => {
  db = await createTestDatabase("tenancy");
  const { Tenant, Site, Loop } = db.models;
  for (const key of ["a", "b"] as const) {
    const t = await Tenant.create({ slug: `tenant-${key}`, name: `Tenant ${key}` });
    const s = await Site.create({ tenantId: t.id, slug: "plant", name: "Plant" });
    const l = await Loop.create({
      tenantId: t.id,
      siteId: s.id,
      areaId: null,
      tag: "PIC-1",
      slug: "pic-1",
      kind: "pressure",
      units: "barg",
      pvLo: 0,
      pvHi: 10,
      mvLimitLo: null,
      mvLimitHi: null,
      telemetryPeriodS: 0.1,
      controllerPeriodS: 0.1,
      gainValue: 1,
      tiValue: 2,
      tfS: null,
      derivativeAlpha: null,
      cascadeMasterLoopId: null,
      estimationPeriodS: 0.2,
      estimationProposedS: null,
      baselineTimeConstantS: null,
    });
    ids[key] = t.id;
    if (key === "a") {
      ids.loopA = l.id;
      ids.siteA = s.id;
    } else ids.loopB = l.id;
  }
});
afterAll(async () => {
  await db?.drop();
});

describe("findOwnedOrThrow", () => {
  it("returns the tenant's own row", async () => {
    const loop = await findOwnedOrThrow(db.models.Loop, ctx(ids.a), ids.loopA, "Loop");
    expect(loop.id).toBe(ids.loopA);
  });

  it("throws NotFoundError (404) for another tenant's id, exactly as for an id that does not exist", async () => {
    const other = await findOwnedOrThrow(db.models.Loop, ctx(ids.a), ids.loopB, "Loop").catch((e: unknown) => e);
    const missing = await findOwnedOrThrow(db.models.Loop, ctx(ids.a), 99_999_999, "Loop").catch((e: unknown) => e);
    expect(other).toBeInstanceOf(NotFoundError);
    expect(missing).toBeInstanceOf(NotFoundError);
    expect((other as NotFoundError).status).toBe(404);
    expect((other as Error).message).toBe((missing as Error).message);
    expect((other as Error).message).toBe("Loop not found.");
  });

  it("findOwned returns null for another tenant's id and for malformed ids", async () => {
    expect(await findOwned(db.models.Loop, ctx(ids.b), ids.loopA)).toBeNull();
    expect(await findOwned(db.models.Loop, ctx(ids.b), Number.NaN)).toBeNull();
  });
});

describe("scoped", () => {
  it("lists only the tenant's rows, even when the caller's where names another tenant", async () => {
    const s = scoped(ctx(ids.a));
    expect((await s.findAll(db.models.Loop)).map((l) => l.id)).toEqual([ids.loopA]);
    expect(await s.findAll(db.models.Loop, { where: { tenantId: ids.b } })).toEqual([]);
    expect(await s.count(db.models.Loop)).toBe(1);
    expect((await s.findOne(db.models.Loop, { where: { slug: "pic-1" } }))?.id).toBe(ids.loopA);
    await expect(s.findByIdOrThrow(db.models.Site, ids.siteA, "Site")).resolves.toBeTruthy();
    await expect(scoped(ctx(ids.b)).findByIdOrThrow(db.models.Site, ids.siteA, "Site")).rejects.toBeInstanceOf(NotFoundError);
  });

  it("refuses a context without a valid tenant instead of running an unscoped query", () => {
    expect(() => scoped(ctx(0))).toThrow(/tenant context/);
    expect(() => tenantWhere(ctx(Number.NaN))).toThrow(/tenant context/);
  });
});

describe("assertOwned", () => {
  it("passes the tenant's row and hides another tenant's row as not found", async () => {
    const row = await db.models.Loop.findByPk(ids.loopB);
    expect(assertOwned(row, ctx(ids.b), "Loop").id).toBe(ids.loopB);
    expect(() => assertOwned(row, ctx(ids.a), "Loop")).toThrow(NotFoundError);
    expect(() => assertOwned(null, ctx(ids.a), "Loop")).toThrow(NotFoundError);
  });
});

describe("a test database as the process-wide connection", () => {
  it("is what getDb() returns while it is the default", async () => {
    const { getDb } = await import("@/lib/data/db/sequelize");
    const { createTestDatabase: create } = await import("@/tests/setup/db");
    const other = await create("dflt", { asDefault: true });
    try {
      expect(getDb().sequelize).toBe(other.sequelize);
      const [rows] = await getDb().sequelize.query("SELECT DATABASE() AS d");
      expect((rows as { d: string }[])[0]?.d).toBe(other.name);
    } finally {
      await other.drop();
    }
  });
});
