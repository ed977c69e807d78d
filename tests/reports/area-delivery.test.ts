/**
 * The handover e-mail goes to the area's subscribers: a subscriber of area A gets area A's
 * handover (its loops and notes, and the site's shift notes without an area), never area B's;
 * a whole-site subscriber gets the site's. Each area's run is claimed once. A subscription names
 * an area of its own site (404 otherwise; an area without its site is refused), and the database
 * refuses a row whose area belongs to another site.
 */
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { buildHandover, siteShiftInfo } from "@/lib/reports/handover";
import { subscribe, subscriptionInputSchema } from "@/lib/reports/delivery";
import { handoverDocument } from "@/lib/reports/document";
import { parseShiftStarts, shiftAt } from "@/lib/reports/shifts";
import type { ServerContext } from "@/server/context";
import type { MailService } from "@/server/mail";
import { createFixture, FakeClock, type Fixture } from "../alarms/helpers";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { addMemberships, startMailContext, tickSending } from "./delivery-fixture";

let db: TestDatabase;
let fx: Fixture;
let ctx: ServerContext;
let mail: MailService;
let areaB = 0;
let otherSite = 0;
let otherSiteArea = 0;
const Z = (s: string) => Date.parse(s);
// The night shift 22:00-06:00 CET (site zone Europe/Berlin, default starts 06:00, 14:00, 22:00).
const NIGHT = shiftAt(Z("2026-11-24T21:00:00Z"), "Europe/Berlin", parseShiftStarts(null));

beforeAll(async () => {
  db = await createTestDatabase("reportsarea", { asDefault: true });
  fx = await createFixture(db.models);
  const q = (sql: string, r: unknown[]) => db.sequelize.query(sql, { replacements: r });
  await q("UPDATE sites SET time_zone = 'Europe/Berlin' WHERE id = ?", [fx.siteId]);
  const [b] = (await q("INSERT INTO areas (tenant_id, site_id, slug, name, created_at, updated_at) VALUES (?,?, 'utilities', 'Utilities', UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))", [fx.tenantId, fx.siteId])) as unknown as [number];
  areaB = Number(b);
  await q(
    `INSERT INTO loops (tenant_id, site_id, area_id, tag, slug, kind, units, pv_lo, pv_hi, telemetry_period_s, controller_period_s, gain_value, ti_value, estimation_period_s, created_at, updated_at)
     VALUES (?,?,?, 'LIC-202', 'lic-202', 'level', '%', 0, 100, 1, 1, 1, 10, 1, UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))`,
    [fx.tenantId, fx.siteId, areaB],
  );
  const [s2] = (await q("INSERT INTO sites (tenant_id, slug, name, time_zone, created_at, updated_at) VALUES (?, 'south-yard', 'South Yard', 'UTC', UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))", [fx.tenantId])) as unknown as [number];
  otherSite = Number(s2);
  const [a2] = (await q("INSERT INTO areas (tenant_id, site_id, slug, name, created_at, updated_at) VALUES (?,?, 'jetty', 'Jetty', UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))", [fx.tenantId, otherSite])) as unknown as [number];
  otherSiteArea = Number(a2);
  await addMemberships(db, [
    [fx.users.operator.userId, fx.tenantId, "operator"],
    [fx.users.engineer.userId, fx.tenantId, "engineer"],
    [fx.users.admin.userId, fx.tenantId, "admin"],
  ]);
  const note = (areaId: number | null, text: string) =>
    q("INSERT INTO operator_notes (tenant_id, site_id, area_id, kind, author_id, author_name, text, at) VALUES (?,?,?, 'shift', ?, 'Demo operator', ?, ?)", [
      fx.tenantId,
      fx.siteId,
      areaId,
      fx.users.operator.userId,
      text,
      new Date(Z("2026-11-25T02:00:00Z")),
    ]);
  await note(fx.areaId, "Reactor R-1 charge delayed");
  await note(areaB, "Utilities: cooling tower fan 2 tripped");
  await note(null, "Whole site: fire drill at 03:00");

  ({ ctx, mail } = await startMailContext(new FakeClock(Z("2026-11-25T05:10:00Z")))); // 06:10 CET: the night shift ended at 06:00
  await subscribe(fx.users.operator, { report: "handover", cadence: "shift", siteId: fx.siteId, areaId: fx.areaId });
  await subscribe(fx.users.engineer, { report: "handover", cadence: "shift", siteId: fx.siteId, areaId: areaB });
  await subscribe(fx.users.admin, { report: "handover", cadence: "shift", siteId: fx.siteId });
}, 120_000);

afterAll(async () => {
  await mail?.stop();
  await db?.drop();
});

describe("area-scoped handover delivery", () => {
  it("an area's handover holds its loops and notes and the site-wide notes, not the other area's", async () => {
    expect(NIGHT.end - NIGHT.start).toBe(8 * 3600_000);
    const tctx = { tenantId: fx.tenantId, tenantName: "Harrowgate Polymers" };
    const a = await buildHandover(tctx, await siteShiftInfo(tctx, fx.siteId, fx.areaId), NIGHT, NIGHT.end + 60_000);
    expect(a.notes.map((n) => n.text).sort()).toEqual(["Reactor R-1 charge delayed", "Whole site: fire drill at 03:00"]);
    const b = await buildHandover(tctx, await siteShiftInfo(tctx, fx.siteId, areaB), NIGHT, NIGHT.end + 60_000);
    expect(b.notes.map((n) => n.text).sort()).toEqual(["Utilities: cooling tower fan 2 tripped", "Whole site: fire drill at 03:00"]);
    expect(handoverDocument(b).title).toBe("Shift handover — North Works · Utilities");
    const site = await buildHandover(tctx, await siteShiftInfo(tctx, fx.siteId), NIGHT, NIGHT.end + 60_000);
    expect(site.notes).toHaveLength(3);
    await expect(siteShiftInfo(tctx, fx.siteId, otherSiteArea)).rejects.toMatchObject({ status: 404 });
  });

  it("each subscriber gets the handover of the area subscribed to, once", async () => {
    const { scheduler: s, box } = await tickSending(ctx, mail, 3);
    const to = (email: string) => box.filter((m) => m.to.includes(email));
    expect(to(fx.users.operator.email).map((m) => m.subject)).toEqual([expect.stringContaining("Shift handover — North Works · Reactors")]);
    expect(to(fx.users.engineer.email).map((m) => m.subject)).toEqual([expect.stringContaining("Shift handover — North Works · Utilities")]);
    expect(to(fx.users.admin.email).map((m) => m.subject)).toEqual([expect.stringMatching(/Shift handover — North Works · 2026/)]);
    expect(await s.tick()).toEqual({ sent: 0, skipped: 3, failed: 0 });
    await s.stop();
    expect(mail.outbox()).toHaveLength(3);
  });

  it("a subscription names an area of its own site", async () => {
    await expect(subscribe(fx.users.operator, { report: "handover", cadence: "shift", siteId: fx.siteId, areaId: otherSiteArea })).rejects.toMatchObject({ status: 404 });
    expect(subscriptionInputSchema.safeParse({ report: "worst-loops", cadence: "weekly", areaId: fx.areaId }).success).toBe(false);
    await expect(
      db.sequelize.query("INSERT INTO report_subscriptions (tenant_id, user_id, report, cadence, site_id, area_id) VALUES (?,?, 'handover', 'shift', ?, ?)", {
        replacements: [fx.tenantId, fx.users.operator.userId, fx.siteId, otherSiteArea],
      }),
    ).rejects.toThrow(/foreign key/i);
  });
});
