/**
 * GET /api/outbox — admin: the messages the in-process SMTP sink received for this tenant (the
 * demo's outbox), newest first. Empty when a real SMTP server is configured.
 */
import { NextResponse } from "next/server";
import { mailApi } from "@/lib/alarms/access";
import { requireContext } from "@/lib/auth/guard";
import { handle } from "@/lib/http";

export const dynamic = "force-dynamic";

export const GET = handle(async () => {
  const ctx = await requireContext("admin");
  const mail = mailApi();
  const messages = mail
    .outbox()
    .filter((m) => m.headers["x-rimguard-tenant"] === String(ctx.tenantId))
    .reverse()
    .map((m) => ({ id: m.id, messageId: m.messageId, from: m.from, to: m.to, subject: m.subject, text: m.text, receivedAt: new Date(m.receivedAt).toISOString() }));
  return NextResponse.json({ sink: mail.sinkPort != null, messages });
});
