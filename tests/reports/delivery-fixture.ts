/** Shared set-up of the report delivery tests: members of the alarm fixture's tenant, and a mail-ready context. */
import { expect } from "vitest";
import type { ServerContext } from "@/server/context";
import { startMail, type MailService } from "@/server/mail";
import { startReports } from "@/server/reports";
import { FakeClock, testContext } from "../alarms/helpers";
import type { TestDatabase } from "../setup/db";

/** Memberships (user id, tenant id, role) written straight to the table. */
export async function addMemberships(db: TestDatabase, rows: [userId: number, tenantId: number, role: string][]): Promise<void> {
  for (const [userId, tenantId, role] of rows)
    await db.sequelize.query("INSERT INTO memberships (user_id, tenant_id, role, created_at, updated_at) VALUES (?,?,?,UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))", {
      replacements: [userId, tenantId, role],
    });
}

/** A server context on `clock` with the mail service (its SMTP sink on a free port) registered. */
export async function startMailContext(clock: FakeClock): Promise<{ ctx: ServerContext; mail: MailService }> {
  const ctx = testContext(clock);
  const mail = await startMail(ctx, { sinkPort: 0 });
  ctx.services.set("mail", mail);
  return { ctx, mail };
}

/** A scheduler's first tick, which must send `n` mails: the scheduler (the caller stops it) and the mails the sink received. */
export async function tickSending(ctx: ServerContext, mail: MailService, n: number) {
  const scheduler = await startReports(ctx, { intervalMs: null });
  expect(await scheduler.tick()).toEqual({ sent: n, skipped: 0, failed: 0 });
  return { scheduler, box: await mail.waitForMessages(n) };
}
