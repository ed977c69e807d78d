/**
 * E-mail: nodemailer over SMTP. With no SMTP_URL configured, an SMTP sink (npm `smtp-server`)
 * runs in-process on loopback and keeps every message it receives in memory, for the admin outbox
 * page of the demo and for assertions in tests. With SMTP_URL set, messages go to that server and
 * the outbox only lists what this process sent.
 *
 * Which tenant a sink message belongs to is recorded here when this process sends it (from the
 * sender's X-Rimguard-Tenant header, keyed by a Message-ID we choose), never read back from the
 * received message: anything else that talks to the sink belongs to no tenant. Parts a sender
 * marks `withhold` (an invitation's one-time link) are blanked in `outboxFor()`, the view the
 * admin outbox shows: only the recipient's own mailbox may hold them.
 */
import type { MailApi, OutboxMessage } from "@/lib/domain/services";
export type { MailMessage, OutboxMessage } from "@/lib/domain/services";

export interface MailService extends Service, MailApi {}

import { randomUUID } from "node:crypto";
import type { AddressInfo } from "node:net";
import nodemailer from "nodemailer";
import { SMTPServer } from "smtp-server";
import type { ServerContext, Service } from "@/server/context";
import { parseRawMessage } from "./parse";



export const WITHHELD_TEXT = "[one-time link withheld: only the recipient's mailbox holds it]";


const OUTBOX_LIMIT = 1000;

export interface StartMailOptions {
  /** Override config SMTP_SINK_PORT (0 = any free port, tests). */
  sinkPort?: number;
  smtpUrl?: string;
}

export async function startMail(ctx: ServerContext, opts: StartMailOptions = {}): Promise<MailService> {
  const smtpUrl = opts.smtpUrl ?? ctx.config.SMTP_URL;
  const from = ctx.config.MAIL_FROM;
  const box: OutboxMessage[] = [];
  const waiters: { n: number; resolve: (m: OutboxMessage[]) => void }[] = [];
  let nextId = 1;
  let sent = 0;
  let failed = 0;
  let lastError: string | null = null;
  let sink: SMTPServer | null = null;
  let sinkPort: number | null = null;
  /** Message-ID -> who sent it and what to withhold, for messages this process sends. */
  const sentBy = new Map<string, { tenantId: number | null; withhold: string[] }>();

  if (!smtpUrl) {
    sink = new SMTPServer({
      authOptional: true,
      disabledCommands: ["STARTTLS", "AUTH"],
      logger: false,
      // Report PDFs travel as attachments (a top-50 report is well under 1 MB; base64 adds a third).
      size: 4 * 1024 * 1024,
      onData(stream, session, callback) {
        const chunks: Buffer[] = [];
        stream.on("data", (c: Buffer) => chunks.push(c));
        stream.on("end", () => {
          const raw = Buffer.concat(chunks).toString("utf8");
          const parsed = parseRawMessage(raw);
          const origin = sentBy.get(parsed.headers["message-id"] ?? "");
          box.push({
            id: nextId++,
            messageId: parsed.headers["message-id"] ?? null,
            from: session.envelope.mailFrom ? session.envelope.mailFrom.address : "",
            to: session.envelope.rcptTo.map((r) => r.address),
            subject: parsed.headers["subject"] ?? "",
            text: parsed.text,
            headers: parsed.headers,
            receivedAt: ctx.clock.now(),
            tenantId: origin?.tenantId ?? null,
            attachments: [...raw.matchAll(/Content-Disposition:\s*attachment;\s*filename="?([^";\r\n]+)"?/gi)].map((m) => m[1]!),
          });
          if (box.length > OUTBOX_LIMIT) box.splice(0, box.length - OUTBOX_LIMIT);
          for (const w of [...waiters]) {
            if (box.length >= w.n) {
              waiters.splice(waiters.indexOf(w), 1);
              w.resolve([...box]);
            }
          }
          callback();
        });
      },
    });
    // Under test several servers may run at once: any free port unless one is asked for.
    const port = opts.sinkPort ?? (ctx.config.NODE_ENV === "test" && !process.env.SMTP_SINK_PORT ? 0 : ctx.config.SMTP_SINK_PORT);
    await new Promise<void>((resolve, reject) => {
      sink!.once("error", reject);
      sink!.listen(port, "127.0.0.1", () => resolve());
    });
    sink.on("error", (err) => console.error("[mail] SMTP sink error", err));
    sinkPort = ((sink as unknown as { server: { address(): AddressInfo } }).server.address() as AddressInfo).port;
  }

  const transport = nodemailer.createTransport(
    smtpUrl ?? { host: "127.0.0.1", port: sinkPort ?? 0, secure: false, ignoreTLS: true, tls: { rejectUnauthorized: false } },
  );

  const service: MailService = {
    name: "mail",
    sinkPort,
    async send(msg) {
      const messageId = `<${randomUUID()}@rimguard.invalid>`;
      const tenantHeader = Object.entries(msg.headers ?? {}).find(([k]) => k.toLowerCase() === "x-rimguard-tenant")?.[1];
      const tenantId = tenantHeader !== undefined && /^\d+$/.test(tenantHeader) ? Number(tenantHeader) : null;
      if (sink) {
        sentBy.set(messageId, { tenantId, withhold: (msg.withhold ?? []).filter((w) => w.length > 0) });
        if (sentBy.size > OUTBOX_LIMIT * 2) sentBy.delete(sentBy.keys().next().value!);
      }
      try {
        const info = await transport.sendMail({ from, to: msg.to, subject: msg.subject, text: msg.text, headers: msg.headers, messageId, attachments: msg.attachments?.map((a) => ({ ...a, content: Buffer.from(a.content) })) });
        sent++;
        lastError = null;
        return { messageId: info.messageId };
      } catch (err) {
        failed++;
        lastError = err instanceof Error ? err.message : String(err);
        throw err;
      }
    },
    outbox: () => [...box],
    outboxFor(tenantId) {
      return box
        .filter((m) => m.tenantId === tenantId)
        .map((m) => {
          const hide = sentBy.get(m.messageId ?? "")?.withhold ?? [];
          return hide.length ? { ...m, text: hide.reduce((t, w) => t.replaceAll(w, WITHHELD_TEXT), m.text) } : m;
        });
    },
    clearOutbox: () => void box.splice(0, box.length),
    waitForMessages(n, timeoutMs = 10_000) {
      if (box.length >= n) return Promise.resolve([...box]);
      return new Promise((resolve, reject) => {
        const w = { n, resolve };
        waiters.push(w);
        setTimeout(() => {
          const i = waiters.indexOf(w);
          if (i >= 0) {
            waiters.splice(i, 1);
            reject(new Error(`mail sink: expected ${n} message(s), have ${box.length} after ${timeoutMs} ms`));
          }
        }, timeoutMs).unref?.();
      });
    },
    health: () => ({
      status: lastError ? "degraded" : "ok",
      detail: { mode: smtpUrl ? "smtp" : "sink", sinkPort, sent, failed, held: box.length, lastError },
    }),
    async stop() {
      transport.close();
      if (sink) await new Promise<void>((resolve) => sink!.close(() => resolve()));
    },
  };
  return service;
}

/** The running mail service of a server context, if any. */
export function mailOf(ctx: ServerContext): MailService | null {
  return (ctx.services.get("mail") as MailService | undefined) ?? null;
}
