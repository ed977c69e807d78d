/**
 * Pages during a database outage. Next renders a page's server components in this process, and
 * when one of them needs the database and cannot reach it, the only status Next can give is 500.
 * So a page request first passes this gate: it asks whether the database answers (one probe at a
 * time, its answer reused for a second, given up after 1.5 s) and, when it does not, answers 503
 * with a short page that says so — never with the driver's message, which names the database's
 * address. Pages built to work from memory during an outage pass through: the alarm list (the alarm
 * service holds every alarm; acknowledging and shelving are journaled) and the sign-in form (its
 * answer then says the database is unavailable). API routes map the same failure themselves
 * (lib/http.ts errorResponse); static files and Socket.IO are not gated.
 */
import type http from "node:http";
import { DATABASE_UNAVAILABLE } from "@/lib/data/db/unavailable";

/** Pages that work without the database. */
export const OUTAGE_PAGES: ReadonlySet<string> = new Set(["/alarms", "/signin"]);

/** True for a GET/HEAD of a console page (not an API route, not a static or build file, not an outage page). */
export function isGatedPage(method: string | undefined, url: string | undefined): boolean {
  if (method !== "GET" && method !== "HEAD") return false;
  let p: string;
  try {
    p = new URL(url ?? "/", "http://localhost").pathname;
  } catch {
    return false;
  }
  if (p.startsWith("/api/") || p.startsWith("/_next/") || p.startsWith("/socket.io")) return false;
  if (/\.[A-Za-z0-9]+$/.test(p)) return false; // favicon, robots.txt, files under public/
  return !OUTAGE_PAGES.has(p.replace(/\/+$/, "") || "/");
}

const escape = (s: string) => s.replace(/[&<>"]/g, (c) => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;" })[c]!);

export const OUTAGE_PAGE_HTML = `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>Database unavailable · Rimguard</title></head>
<body><main role="alert">
<h1>Database unavailable</h1>
<p>${escape(DATABASE_UNAVAILABLE)}</p>
<p><a href="/alarms">Open the alarm list</a> · <a href="">Try this page again</a></p>
<p>Rimguard is advisory only; follow your site's procedures for the plant itself.</p>
</main></body></html>
`;

export interface DatabaseGateOptions {
  /** How long one probe's answer is reused (ms). */
  cacheMs?: number;
  /** A probe without an answer by then counts as unreachable (ms). */
  timeoutMs?: number;
  now?: () => number;
}

/** A request gate: resolves true when it has answered the request itself (503). */
export function createDatabaseGate(probe: () => Promise<unknown>, opts: DatabaseGateOptions = {}) {
  const cacheMs = opts.cacheMs ?? 1_000;
  const timeoutMs = opts.timeoutMs ?? 1_500;
  const now = opts.now ?? Date.now;
  let last: { at: number; ok: boolean } | null = null;
  let inflight: Promise<boolean> | null = null;

  function reachable(): Promise<boolean> {
    if (last && now() - last.at < cacheMs) return Promise.resolve(last.ok);
    inflight ??= (async () => {
      let timer: NodeJS.Timeout | undefined;
      try {
        const timeout = new Promise<never>((_, reject) => {
          timer = setTimeout(() => reject(new Error("timeout")), timeoutMs);
        });
        await Promise.race([probe(), timeout]);
        last = { at: now(), ok: true };
      } catch {
        last = { at: now(), ok: false };
      } finally {
        if (timer) clearTimeout(timer);
        inflight = null;
      }
      return last.ok;
    })();
    return inflight;
  }

  return async function gate(req: http.IncomingMessage, res: http.ServerResponse): Promise<boolean> {
    if (!isGatedPage(req.method, req.url)) return false;
    if (await reachable()) return false;
    res.writeHead(503, {
      "content-type": "text/html; charset=utf-8",
      "cache-control": "no-store",
      "retry-after": "10",
      "x-content-type-options": "nosniff",
    });
    res.end(req.method === "HEAD" ? undefined : OUTAGE_PAGE_HTML);
    return true;
  };
}
