/**
 * The report scheduler: keeps the per-loop daily summaries current and delivers reports by e-mail
 * through the mail service, with the PDF attached.
 *
 * - Daily summaries: today's are rebuilt every TODAY_REBUILD_MINUTES (the reports include today so far),
 *   yesterday's once after midnight (idempotent set-based statements, lib/data/reports.ts;
 *   `npm run bench:reports` measures one full day of 2,000 loops), each with the diagnosis of the
 *   live assessment's finding of that day (findings.ts).
 * - Shift handovers: when a site's shift has ended (within the last HANDOVER_CATCH_UP_MS, so a
 *   restart still sends the one it missed): the whole site's handover to the site's subscribers,
 *   and each area's handover (its loops, alarms and notes) to that area's subscribers only.
 * - Weekly reports: for the previous ISO week (Monday 00:00 UTC), to each weekly subscriber.
 * Each run is claimed in report_runs before it is built (lib/data/reports-delivery.ts): no run goes out
 * twice, across ticks, processes and restarts. `tick()` is public for tests.
 */
import type { ServerContext, Service } from "@/server/context";
import { mailOf } from "@/server/mail";
import { allSites, claimRun, finishRun, handoverAreas, handoverRecipients, weeklySubscriptions, type Recipient, type RunKey } from "@/lib/data/reports";
import { handoverDocument, type ReportDoc } from "@/lib/reports/document";
import { buildFleetHealth } from "@/lib/reports/fleet-health";
import { fleetHealthDocument } from "@/lib/reports/fleet-health-document";
import { buildHandover, siteShiftInfo } from "@/lib/reports/handover";
import { reportPdf } from "@/lib/reports/pdf";
import { lastEndedShift, parseShiftStarts } from "@/lib/reports/shifts";
import { TODAY_REBUILD_MINUTES, utcDay } from "@/lib/reports/summaries";
import { buildWorstLoops } from "@/lib/reports/worst-loops";
import { worstLoopsDocument } from "@/lib/reports/worst-loops-document";
import { isoWeek } from "@/lib/reports/fleet-health";
import { liveFindingsOf, summarizeDayWithFindings, type FindingLookup } from "./findings";

const DAY_MS = 86_400_000;
export const HANDOVER_CATCH_UP_MS = 6 * 3600_000;
const TICK_MS = 60_000;
const TODAY_EVERY_MS = TODAY_REBUILD_MINUTES * 60_000;

export interface ReportScheduler extends Service {
  tick(): Promise<{ sent: number; skipped: number; failed: number }>;
}

export async function startReports(ctx: ServerContext, opts: { intervalMs?: number | null; findings?: FindingLookup } = {}): Promise<ReportScheduler> {
  let lastToday = -Infinity;
  let lastYesterday = "";
  let running: Promise<unknown> | null = null;
  let runs = 0;
  let lastError: string | null = null;

  async function deliver(key: RunKey, recipients: Recipient[], build: (r: Recipient) => Promise<ReportDoc>): Promise<"sent" | "skipped" | "failed"> {
    const now = ctx.clock.now();
    if (!(await claimRun(key, now))) return "skipped";
    const mail = mailOf(ctx);
    if (!recipients.length) {
      await finishRun(key, "no-recipients", 0, null, now);
      return "sent";
    }
    try {
      if (!mail) throw new Error("the mail service is not running");
      for (const r of recipients) {
        const doc = await build(r);
        const pdf = await reportPdf(doc);
        await mail.send({
          to: [r.email],
          subject: `[Rimguard] ${doc.title} · ${doc.period}`,
          text: `${doc.title}\n${doc.tenant} · ${doc.period}\n\nThe report is attached as a PDF. You receive it because you subscribed to it in Rimguard (Reports › E-mail delivery).\n\n${doc.caution}\n`,
          headers: { "X-Rimguard-Tenant": String(key.tenantId), "X-Rimguard-Report": key.kind },
          attachments: [{ filename: `${doc.fileName}.pdf`, content: pdf, contentType: "application/pdf" }],
        });
      }
      await finishRun(key, "sent", recipients.length, null, ctx.clock.now());
      return "sent";
    } catch (err) {
      const msg = err instanceof Error ? err.message : String(err);
      await finishRun(key, "failed", recipients.length, msg, ctx.clock.now());
      lastError = msg;
      return "failed";
    }
  }

  async function tickOnce(): Promise<{ sent: number; skipped: number; failed: number }> {
    const now = ctx.clock.now();
    const count = { sent: 0, skipped: 0, failed: 0 };
    // Looked up per tick: the pipeline starts after this service.
    const findings = opts.findings ?? liveFindingsOf(ctx);
    if (now - lastToday >= TODAY_EVERY_MS) {
      await summarizeDayWithFindings(utcDay(now), findings);
      lastToday = now;
    }
    const yesterday = utcDay(now - DAY_MS);
    if (lastYesterday !== yesterday) {
      await summarizeDayWithFindings(yesterday, findings);
      lastYesterday = yesterday;
    }

    for (const site of await allSites()) {
      let starts: number[];
      try {
        starts = parseShiftStarts(site.shiftStarts);
      } catch {
        continue; // a bad setting is refused when saved; an old row must not stop the others
      }
      const shift = lastEndedShift(now, site.timeZone, starts);
      if (now - shift.end > HANDOVER_CATCH_UP_MS) continue;
      const tctx = { tenantId: site.tenantId, tenantName: site.tenantName };
      // The whole site (area null), then each area with subscribers of its own.
      for (const areaId of [null, ...(await handoverAreas(site.tenantId, site.id))]) {
        const key: RunKey = { tenantId: site.tenantId, kind: "handover", scopeKey: areaId === null ? `site:${site.id}` : `area:${areaId}`, periodStart: shift.start, periodEnd: shift.end };
        const recipients = await handoverRecipients(site.tenantId, site.id, areaId);
        let doc: ReportDoc | null = null;
        const r = await deliver(key, recipients, async () => (doc ??= handoverDocument(await buildHandover(tctx, await siteShiftInfo(tctx, site.id, areaId), shift, now))));
        count[r]++;
      }
    }

    const week = isoWeek(now);
    const period = { from: week.start - 7 * DAY_MS, to: week.start };
    for (const sub of await weeklySubscriptions()) {
      if (sub.report === "handover") continue;
      const key: RunKey = { tenantId: sub.tenantId, kind: sub.report, scopeKey: `sub:${sub.subscriptionId}`, periodStart: period.from, periodEnd: period.to };
      const tctx = { tenantId: sub.tenantId, tenantName: sub.tenantName };
      const scope = { siteId: sub.siteId ?? undefined, areaId: sub.areaId ?? undefined, siteIds: sub.siteIds };
      const r = await deliver(key, [sub], async () =>
        sub.report === "worst-loops"
          ? worstLoopsDocument(await buildWorstLoops(tctx, { ...period, ...scope }, now), { limit: 50 })
          : fleetHealthDocument(await buildFleetHealth(tctx, { from: period.to - 84 * DAY_MS, to: period.to, granularity: "week", ...scope }, now)),
      );
      count[r]++;
    }
    runs++;
    return count;
  }

  const tick = async () => {
    while (running) await running.catch(() => {});
    const p = tickOnce();
    running = p;
    try {
      return await p;
    } catch (err) {
      lastError = err instanceof Error ? err.message : String(err);
      throw err;
    } finally {
      running = null;
    }
  };

  const interval = opts.intervalMs === null ? null : setInterval(() => void tick().catch((err) => console.error("[reports] tick failed", err)), opts.intervalMs ?? TICK_MS);
  interval?.unref?.();

  return {
    name: "reports",
    tick,
    health: () => ({ status: lastError ? "degraded" : "ok", detail: { ticks: runs, lastError } }),
    async stop() {
      if (interval) clearInterval(interval);
      await running?.catch(() => {});
    },
  };
}
