/**
 * GET /api/outbox — admin: the messages the in-process SMTP sink received for this tenant (the
 * demo's outbox), newest first. Empty when a real SMTP server is configured. A message belongs to
 * a tenant only when this process sent it for that tenant (server/mail), and one-time links are
 * withheld: an admin never reads another tenant's mail or an invitee's link.
 */
import { NextResponse } from "next/server";
import { mailApi } from "@/lib/data/server-context";
import { requireContext } from "@/lib/auth/guard";
import { handle } from "@/lib/http";

export const dynamic = "force-dynamic";

export const GET = handle(async () => {
  const ctx = await requireContext("admin");
  const mail = mailApi();
  const messages = mail
    .outboxFor(ctx.tenantId)
    .reverse()
    .map((m) => ({ id: m.id, messageId: m.messageId, from: m.from, to: m.to, subject: m.subject, text: m.text, receivedAt: new Date(m.receivedAt).toISOString() }));
  return NextResponse.json({ sink: mail.sinkPort != null, messages });
});
