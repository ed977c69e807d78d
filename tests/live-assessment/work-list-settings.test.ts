/**
 * The work list's engineering settings per tenant (lib/work-list/settings.ts): the sluggish-tuning
 * finding's multiple of the loop's baseline time constant. Engineers read it, only admins set it
 * (with a reason, in the configuration change log); bad input is a 422 naming the field; the live
 * assessment's loops carry the tenant's value (server/assessment/loop-configs.ts) and another
 * tenant's setting never reaches them. The level's meaning is checked in tests/assessment/model-check.test.ts.
 */
import { publicOrigin } from "@/lib/config";
import { QueryTypes } from "sequelize";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import type { Role } from "@/lib/domain/types";
import { signInAs } from "@/tests/helpers/guard-stand-in";
import { createAuthFixture, fixtureContext, type AuthFixture } from "../auth/fixture";
import { createTestDatabase, type TestDatabase } from "../setup/db";

vi.mock("@/lib/auth/guard", async () => (await import("@/tests/helpers/guard-stand-in")).guardStandIn());

const route = await import("@/app/api/work-list/settings/route");
const { loadLiveLoops } = await import("@/server/assessment/loop-configs");

let db: TestDatabase;
let fx: AuthFixture;
const ctxOf = (t: AuthFixture["a"], role: Role) => fixtureContext(t, role, role);
const put = (body: unknown) =>
  new Request("http://127.0.0.1/api/work-list/settings", { method: "PUT", headers: { "content-type": "application/json", origin: publicOrigin() }, body: JSON.stringify(body) });
type Settings = { settings: { sluggishMultiple: number; isDefault: boolean; updatedBy: string | null } };

beforeAll(async () => {
  db = await createTestDatabase("wls", { asDefault: true });
  fx = await createAuthFixture(db.models);
  await db.sequelize.query("UPDATE loops SET baseline_time_constant_s = 30");
}, 120_000);
afterAll(async () => {
  await db?.drop();
});

describe("work-list settings", () => {
  it("engineers read the default (3×); operators may not", async () => {
    signInAs(ctxOf(fx.a, "operator"));
    expect((await route.GET()).status).toBe(403);
    signInAs(ctxOf(fx.a, "engineer"));
    const res = await route.GET();
    expect(res.status).toBe(200);
    expect(((await res.json()) as Settings).settings).toMatchObject({ sluggishMultiple: 3, isDefault: true });
  });

  it("only admins set it; a multiple of 1 or less, or no reason, is a 422 naming the field", async () => {
    signInAs(ctxOf(fx.a, "engineer"));
    expect((await route.PUT(put({ sluggishMultiple: 4, reason: "slow level loops" }))).status).toBe(403);
    signInAs(ctxOf(fx.a, "admin"));
    const low = await route.PUT(put({ sluggishMultiple: 1, reason: "x" }));
    expect(low.status).toBe(422);
    expect(((await low.json()) as { error: string }).error).toMatch(/sluggishMultiple: must be above 1/);
    const noReason = await route.PUT(put({ sluggishMultiple: 4 }));
    expect(noReason.status).toBe(422);
    expect(((await noReason.json()) as { error: string }).error).toMatch(/reason/);
  });

  it("an admin's change is stored, logged with its reason and carried by the tenant's live loops only", async () => {
    signInAs(ctxOf(fx.a, "admin"));
    const res = await route.PUT(put({ sluggishMultiple: 4.5, reason: "level loops are slow by design" }));
    expect(res.status).toBe(200);
    expect(((await res.json()) as Settings).settings).toMatchObject({ sluggishMultiple: 4.5, isDefault: false, updatedBy: `Admin of ${fx.a.name}` });
    const [log] = await db.sequelize.query<{ entity: string; diff: unknown; reason: string; user_id: number }>(
      "SELECT entity, diff, reason, user_id FROM config_changes WHERE entity = 'work_list_settings' ORDER BY id DESC LIMIT 1",
      { type: QueryTypes.SELECT },
    );
    expect(log).toMatchObject({ entity: "work_list_settings", reason: "level loops are slow by design", user_id: fx.a.users.admin.id });
    const diff = typeof log!.diff === "string" ? (JSON.parse(log!.diff) as unknown) : log!.diff;
    expect(diff).toEqual({ sluggishMultiple: { from: 3, to: 4.5 } });
    const { loops } = await loadLiveLoops(db.sequelize);
    const mine = loops.filter((l) => l.tenantId === fx.a.id);
    const theirs = loops.filter((l) => l.tenantId === fx.b.id);
    expect(mine.length).toBeGreaterThan(0);
    expect(theirs.length).toBeGreaterThan(0);
    expect(mine.every((l) => l.sluggishMultiple === 4.5 && l.baselineTimeConstantS === 30)).toBe(true);
    expect(theirs.every((l) => l.sluggishMultiple === undefined)).toBe(true);
  });
});
