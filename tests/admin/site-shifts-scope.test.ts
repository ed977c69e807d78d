/**
 * Site settings an admin makes for reporting: a site's shift times (local starts in its IANA
 * zone; ordered, distinct, at least an hour apart; logged with a reason; the handover follows
 * them) and a member's site scope (seen and changed through the admin's member list; logged).
 * Route handlers on a real MariaDB; the session guard is a stand-in applying the same role rule.
 * Berlin's offset in December (UTC+1) is common knowledge (CET), no source.
 */
import { QueryTypes } from "sequelize";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import type { TenantContext } from "@/lib/domain/types";
import { resolveShift, siteShiftInfo } from "@/lib/reports/handover";
import { shiftStartProblems } from "@/lib/reports/shifts";
import { createFixture, type Fixture } from "../alarms/helpers";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { jsonRequest } from "@/tests/helpers/json-request";

let current: TenantContext | null = null;
vi.mock("@/lib/auth/guard", async () => (await import("@/tests/helpers/guard-stand-in")).guardStandIn({ currentUser: () => current }));
vi.mock("@/lib/data/server-context", async (orig) => ({ ...(await orig<object>()), notifyUserChanged: () => {} }));

const shiftsRoute = await import("@/app/api/admin/sites/[siteId]/shifts/route");
const sitesRoute = await import("@/app/api/admin/users/[membershipId]/sites/route");
const usersRoute = await import("@/app/api/admin/users/route");

let db: TestDatabase;
let fx: Fixture;
const url = (p: string) => `http://127.0.0.1${p}`;
const put = (p: string, body: unknown) => jsonRequest("PUT", p, body);
const params = <K extends string>(k: K, v: number) => ({ params: Promise.resolve({ [k]: String(v) } as Record<K, string>) });
const putShifts = (siteId: number, body: unknown) => shiftsRoute.PUT(put(`/api/admin/sites/${siteId}/shifts`, body), params("siteId", siteId));

beforeAll(async () => {
  db = await createTestDatabase("adminshifts", { asDefault: true });
  fx = await createFixture(db.models);
  for (const role of ["viewer", "operator", "engineer", "admin"] as const) {
    await db.sequelize.query("INSERT INTO memberships (user_id, tenant_id, role, created_at, updated_at) VALUES (?,?,?,UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))", {
      replacements: [fx.users[role].userId, fx.tenantId, role],
    });
  }
}, 120_000);

afterAll(async () => {
  await db?.drop();
});

describe("shift times of a site", () => {
  it("the rules: ordered, distinct, HH:MM, at least an hour, at most six", () => {
    expect(shiftStartProblems(["06:00", "14:00", "22:00"])).toEqual([]);
    expect(shiftStartProblems(["07:00", "19:00"])).toEqual([]);
    expect(shiftStartProblems(["14:00", "06:00"])[0]?.message).toMatch(/order of the day/);
    expect(shiftStartProblems(["06:00", "06:00"])[0]?.message).toMatch(/twice/);
    expect(shiftStartProblems(["6:00"])[0]?.message).toMatch(/HH:MM/);
    expect(shiftStartProblems(["06:00", "06:30", "18:00"])[0]?.message).toMatch(/30 min/);
    expect(shiftStartProblems(["00:00", "23:30"]).map((p) => p.index)).toEqual([1]); // 23:30 -> 00:00 is 30 min
    expect(shiftStartProblems([])).toHaveLength(1);
    expect(shiftStartProblems(["00:00", "04:00", "08:00", "12:00", "16:00", "20:00", "22:00"]).some((p) => /At most 6/.test(p.message))).toBe(true);
  });

  it("an admin sets 07:00/19:00 in Europe/Berlin with a reason; it is logged and the handover follows it", async () => {
    current = fx.users.admin;
    const r = await putShifts(fx.siteId, { timeZone: "Europe/Berlin", shiftStarts: ["07:00", "19:00"], reason: "Two-shift pattern from December" });
    expect(r.status).toBe(200);
    expect(((await r.json()) as { site: unknown }).site).toEqual({ siteId: fx.siteId, siteName: "North Works", timeZone: "Europe/Berlin", shiftStarts: ["07:00", "19:00"] });
    const [log] = await db.sequelize.query<{ diff: string | object; reason: string }>("SELECT diff, reason FROM config_changes WHERE entity = 'site' AND entity_id = ? ORDER BY id DESC LIMIT 1", {
      replacements: [fx.siteId],
      type: QueryTypes.SELECT,
    });
    const diff = typeof log!.diff === "string" ? JSON.parse(log!.diff) : log!.diff;
    expect(diff).toEqual({ timeZone: { from: "UTC", to: "Europe/Berlin" }, shiftStarts: { from: "06:00,14:00,22:00", to: "07:00,19:00" } });
    expect(log!.reason).toBe("Two-shift pattern from December");
    const site = await siteShiftInfo(fx.users.viewer, fx.siteId);
    // 2026-12-02 10:00Z is 11:00 CET: the day shift 07:00-19:00 CET = 06:00Z-18:00Z runs.
    const shift = resolveShift(site, "current", Date.parse("2026-12-02T10:00:00Z"));
    expect([new Date(shift.start).toISOString(), new Date(shift.end).toISOString()]).toEqual(["2026-12-02T06:00:00.000Z", "2026-12-02T18:00:00.000Z"]);
    current = fx.users.viewer;
    const g = await shiftsRoute.GET(new Request(url(`/api/admin/sites/${fx.siteId}/shifts`)), params("siteId", fx.siteId));
    expect(((await g.json()) as { site: { shiftStarts: string[] } }).site.shiftStarts).toEqual(["07:00", "19:00"]);
  });

  it("refuses bad input with a clear 422 and changes nothing", async () => {
    current = fx.users.admin;
    for (const body of [
      { timeZone: "Europe/Berlin", shiftStarts: ["19:00", "07:00"], reason: "swap" },
      { timeZone: "Europe/Berlin", shiftStarts: ["07:00", "07:00"], reason: "dup" },
      { timeZone: "Mars/Olympus_Mons", shiftStarts: ["07:00"], reason: "zone" },
      { timeZone: "Europe/Berlin", shiftStarts: ["07:00", "07:30"], reason: "short" },
      { timeZone: "Europe/Berlin", shiftStarts: ["07:00"], reason: "" },
    ]) {
      const r = await putShifts(fx.siteId, body);
      expect(r.status).toBe(422);
      expect(((await r.json()) as { error: string }).error).toBeTruthy();
    }
    const [row] = await db.sequelize.query<{ shift_starts: string }>("SELECT shift_starts FROM sites WHERE id = ?", { replacements: [fx.siteId], type: QueryTypes.SELECT });
    expect(row!.shift_starts).toBe("07:00,19:00");
  });

  it("only admins change them; another tenant's site is a 404", async () => {
    current = fx.users.engineer;
    expect((await putShifts(fx.siteId, { timeZone: "UTC", shiftStarts: ["06:00"], reason: "try" })).status).toBe(403);
    current = fx.outsider;
    expect((await putShifts(fx.siteId, { timeZone: "UTC", shiftStarts: ["06:00"], reason: "try" })).status).toBe(404);
  });
});

describe("a member's site scope in the admin's member list", () => {
  it("shows every member's sites, and a change is seen there and logged", async () => {
    current = fx.users.admin;
    const list = async () => ((await (await usersRoute.GET()).json()) as { members: { membershipId: number; userId: number; siteIds: number[] | null }[] }).members;
    const viewer = (await list()).find((m) => m.userId === fx.users.viewer.userId)!;
    expect(viewer.siteIds).toBeNull();
    const r = await sitesRoute.PUT(put(`/api/admin/users/${viewer.membershipId}/sites`, { siteIds: [fx.siteId], reason: "Client staff: North Works only" }), params("membershipId", viewer.membershipId));
    expect(r.status).toBe(200);
    expect((await list()).find((m) => m.userId === fx.users.viewer.userId)!.siteIds).toEqual([fx.siteId]);
    const [log] = await db.sequelize.query<{ reason: string }>("SELECT reason FROM config_changes WHERE entity = 'membership' AND entity_id = ? ORDER BY id DESC LIMIT 1", {
      replacements: [viewer.membershipId],
      type: QueryTypes.SELECT,
    });
    expect(log!.reason).toBe("Client staff: North Works only");
    await sitesRoute.PUT(put(`/api/admin/users/${viewer.membershipId}/sites`, { siteIds: [], reason: "Limit lifted" }), params("membershipId", viewer.membershipId));
    expect((await list()).find((m) => m.userId === fx.users.viewer.userId)!.siteIds).toBeNull();
  });
});
