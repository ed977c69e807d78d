/**
 * Scheduled delivery: the handover goes out once after its shift ends, to the site's subscribers
 * who are members of the tenant; the weekly report once per week per subscription; a second tick
 * and a restarted scheduler send nothing again; a run left claimed by a process that died is taken
 * over after the stale time; a user whose membership ended, or who never was a member, gets nothing.
 * Mail goes through the real mail service into its SMTP sink.
 */
import { QueryTypes } from "sequelize";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { subscribe } from "@/lib/reports/delivery";
import type { ServerContext } from "@/server/context";
import type { MailService } from "@/server/mail";
import { startReports } from "@/server/reports";
import { createFixture, FakeClock, type Fixture } from "../alarms/helpers";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { addMemberships, startMailContext, tickSending } from "./delivery-fixture";

let db: TestDatabase;
let fx: Fixture;
let ctx: ServerContext;
let clock: FakeClock;
let mail: MailService;
const Z = (s: string) => Date.parse(s);

beforeAll(async () => {
  db = await createTestDatabase("reportsmail", { asDefault: true });
  fx = await createFixture(db.models);
  await db.sequelize.query("UPDATE sites SET time_zone = 'Europe/Berlin' WHERE id = ?", { replacements: [fx.siteId] });
  await addMemberships(db, [
    [fx.users.operator.userId, fx.tenantId, "operator"],
    [fx.users.viewer.userId, fx.tenantId, "viewer"],
    [fx.outsider.userId, fx.otherTenantId, "admin"],
  ]);
  clock = new FakeClock(Z("2026-11-25T05:10:00Z")); // 06:10 CET: the night shift ended at 06:00
  ({ ctx, mail } = await startMailContext(clock));
  await subscribe(fx.users.operator, { report: "handover", cadence: "shift", siteId: fx.siteId });
  await subscribe(fx.users.viewer, { report: "worst-loops", cadence: "weekly" });
  // A subscription row naming a user of another tenant (not a member here): must never be served.
  await db.sequelize.query("INSERT INTO report_subscriptions (tenant_id, user_id, report, cadence, site_id) VALUES (?,?, 'handover', 'shift', ?)", {
    replacements: [fx.tenantId, fx.outsider.userId, fx.siteId],
  });
}, 120_000);

afterAll(async () => {
  await mail?.stop();
  await db?.drop();
});

describe("scheduled report e-mails", () => {
  it("sends the ended shift's handover and last week's report once each, with the PDF attached, only to members", async () => {
    const { scheduler: s, box } = await tickSending(ctx, mail, 2);
    const handover = box.find((m) => m.headers["x-rimguard-report"] === "handover")!;
    expect(handover.to).toEqual([fx.users.operator.email]);
    expect(handover.subject).toContain("Shift handover");
    expect(handover.subject).toContain("2026-11-24 22:00 – 2026-11-25 06:00");
    expect(handover.attachments).toEqual([expect.stringMatching(/^handover-.*\.pdf$/)]);
    expect(handover.tenantId).toBe(fx.tenantId);
    const weekly = box.find((m) => m.headers["x-rimguard-report"] === "worst-loops")!;
    expect(weekly.to).toEqual([fx.users.viewer.email]);
    expect(weekly.subject).toContain("2026-11-16 – 2026-11-22");
    expect(box.flatMap((m) => m.to)).not.toContain(fx.outsider.email);
    await s.stop();
  });

  it("a second tick and a restarted scheduler send nothing again", async () => {
    const again = await startReports(ctx, { intervalMs: null });
    expect(await again.tick()).toEqual({ sent: 0, skipped: 2, failed: 0 });
    await again.stop();
    const restarted = await startReports(ctx, { intervalMs: null });
    expect(await restarted.tick()).toEqual({ sent: 0, skipped: 2, failed: 0 });
    await restarted.stop();
    expect(mail.outbox()).toHaveLength(2);
  });

  it("a run left claimed by a process that died is taken over after 10 minutes, not before", async () => {
    // The early shift (06:00-14:00 CET) ends 13:00Z; pretend a process claimed it at 13:00:30Z and died.
    await db.sequelize.query(
      "INSERT INTO report_runs (tenant_id, kind, scope_key, period_start, period_end, status, claimed_at) VALUES (?, 'handover', ?, ?, ?, 'claimed', ?)",
      { replacements: [fx.tenantId, `site:${fx.siteId}`, new Date(Z("2026-11-25T05:00:00Z")), new Date(Z("2026-11-25T13:00:00Z")), new Date(Z("2026-11-25T13:00:30Z"))] },
    );
    const s = await startReports(ctx, { intervalMs: null });
    clock.t = Z("2026-11-25T13:05:00Z");
    expect((await s.tick()).sent).toBe(0);
    clock.t = Z("2026-11-25T13:11:00Z");
    expect((await s.tick()).sent).toBe(1);
    const [run] = await db.sequelize.query<{ status: string; recipients: number }>(
      "SELECT status, recipients FROM report_runs WHERE scope_key = ? AND period_start = ?",
      { replacements: [`site:${fx.siteId}`, new Date(Z("2026-11-25T05:00:00Z"))], type: QueryTypes.SELECT },
    );
    expect(run).toEqual({ status: "sent", recipients: 1 });
    await s.stop();
  });

  it("a member removed from the tenant gets no further mail", async () => {
    await db.sequelize.query("DELETE FROM memberships WHERE user_id = ? AND tenant_id = ?", { replacements: [fx.users.viewer.userId, fx.tenantId] });
    const before = mail.outbox().length;
    clock.t = Z("2026-12-01T05:10:00Z"); // a new week (and a new ended shift)
    const s = await startReports(ctx, { intervalMs: null });
    await s.tick();
    await new Promise((r) => setTimeout(r, 300));
    const fresh = mail.outbox().slice(before);
    expect(fresh.map((m) => m.to[0])).toEqual([fx.users.operator.email]);
    await s.stop();
  });
});
