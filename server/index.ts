/**
 * The Rimguard server: one Node process, one HTTP server carrying Next.js (custom-server mode) and
 * Socket.IO, plus the long-running services of server/services.ts. Run it as
 * `node --import tsx server/index.ts [--dev]`; tests call `startServer({ port: 0 })`.
 */
import http from "node:http";
import path from "node:path";
import { fileURLToPath } from "node:url";
import next from "next";
import { Server as IoServer } from "socket.io";
import { getConfig, publicOrigin, resetConfigCache } from "@/lib/config";
import { loadEnv } from "@/lib/load-env";
import { setServerContext } from "@/lib/data/server-context";
import { CLIENT_IP_HEADER } from "@/lib/auth/options";
import { closeSequelize, pingDatabase } from "@/lib/data/db/sequelize";
import { bodyLimitForPath } from "@/lib/request-guard";
import { contentSecurityPolicy, makeNonce, STATIC_SECURITY_HEADERS } from "@/lib/security-headers";
import { isDatabaseUnavailable } from "@/lib/data/db/unavailable";
import { Bus, systemClock, type RimguardIo, type ServerContext, type Service } from "./context";
import { createDatabaseGate } from "./db-gate";
import { installSocketAuth, originAllowed } from "./realtime/socket-auth";
import { startServices, stopServices, type StartServicesOptions } from "./services";

export const REPO_ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), "..");

export interface StartServerOptions extends StartServicesOptions {
  /** 0 = any free port (tests). Default: config PORT. */
  port?: number;
  host?: string;
  dev?: boolean;
  /** Next's project directory (default: the repository root). */
  dir?: string;
  quiet?: boolean;
}

export interface RunningServer {
  url: string;
  port: number;
  ctx: ServerContext;
  stop(): Promise<void>;
}

function databaseService(): Service {
  return {
    name: "database",
    async health() {
      const t0 = performance.now();
      try {
        await pingDatabase();
        return { status: "ok", detail: { latencyMs: Math.round((performance.now() - t0) * 10) / 10 } };
      } catch (err) {
        // The health answer is public: the driver's message would name the database's address.
        console.warn("[server] database health probe failed:", err instanceof Error ? err.message : String(err));
        return { status: "critical", detail: { error: isDatabaseUnavailable(err) ? "database unreachable" : "database error" } };
      }
    },
    async stop() {
      await closeSequelize();
    },
  };
}

function realtimeService(io: RimguardIo, stopAuth: () => void): Service {
  return {
    name: "realtime",
    health: () => ({ status: "ok", detail: { clients: io.engine.clientsCount } }),
    async stop() {
      stopAuth();
      io.disconnectSockets(true);
      await new Promise<void>((resolve) => void io.close(() => resolve()));
    },
  };
}

type UpgradeFn = (req: http.IncomingMessage, socket: import("node:stream").Duplex, head: Buffer) => Promise<void> | void;

/**
 * Next's custom server attaches its own 'upgrade' listener on the first request unless told it
 * did; we route upgrades ourselves so Socket.IO keeps /socket.io. Its `upgradeHandler` getter is
 * the router-level handler that serves HMR (`getUpgradeHandler()` returns the render server's,
 * which does not).
 */
interface NextUpgradeInternals {
  didWebSocketSetup?: boolean;
  upgradeHandler?: UpgradeFn;
}

/**
 * 413 before anything is read when the declared body is larger than the path accepts
 * (lib/request-guard.ts); the connection is closed so the rest of the body is never taken in.
 */
function refuseLargeBody(req: http.IncomingMessage, res: http.ServerResponse): boolean {
  const declared = Number(req.headers["content-length"] ?? NaN);
  if (!Number.isFinite(declared)) return false;
  const limit = bodyLimitForPath((req.url ?? "/").split("?")[0] ?? "/");
  if (declared <= limit) return false;
  const body = JSON.stringify({ error: `The request body is larger than this endpoint accepts (${Math.round(limit / 1024)} KiB).` });
  res.shouldKeepAlive = false;
  res.writeHead(413, { "content-type": "application/json", connection: "close", ...STATIC_SECURITY_HEADERS });
  res.end(body, () => req.socket.destroy());
  return true;
}

/** Security headers on every answer; the CSP nonce is handed to Next through the request. */
function setSecurityHeaders(req: http.IncomingMessage, res: http.ServerResponse, dev: boolean): void {
  const csp = contentSecurityPolicy(makeNonce(), dev);
  req.headers["content-security-policy"] = csp;
  res.setHeader("Content-Security-Policy", csp);
  for (const [k, v] of Object.entries(STATIC_SECURITY_HEADERS)) res.setHeader(k, v);
}

export async function startServer(opts: StartServerOptions = {}): Promise<RunningServer> {
  const cfg = getConfig();
  const dev = opts.dev ?? cfg.NODE_ENV === "development";
  const host = opts.host ?? cfg.HOST;
  const dir = opts.dir ?? REPO_ROOT;
  const log = opts.quiet ? () => {} : (m: string) => console.info(m);

  let handler: ((req: http.IncomingMessage, res: http.ServerResponse) => Promise<void>) | null = null;
  const server = http.createServer((req, res) => {
    // The client's address for sign-in throttling comes from the TCP peer, never from the client.
    delete req.headers[CLIENT_IP_HEADER];
    req.headers[CLIENT_IP_HEADER] = req.socket.remoteAddress ?? "unknown";
    if (refuseLargeBody(req, res)) return;
    setSecurityHeaders(req, res, dev);
    if (!handler) {
      res.writeHead(503, { "content-type": "text/plain", "retry-after": "2" }).end("Rimguard is starting.\n");
      return;
    }
    handler(req, res).catch((err: unknown) => {
      console.error("[server] request failed", err);
      if (!res.headersSent) res.writeHead(500).end();
      else res.end();
    });
  });
  server.keepAliveTimeout = 65_000;

  await new Promise<void>((resolve, reject) => {
    server.once("error", reject);
    server.listen(opts.port ?? cfg.PORT, host, () => {
      server.off("error", reject);
      resolve();
    });
  });
  const address = server.address();
  const port = typeof address === "object" && address ? address.port : (opts.port ?? cfg.PORT);
  const url = `http://${host.includes(":") ? `[${host}]` : host}:${port}`;

  // next-auth builds its callback URLs from NEXTAUTH_URL; with port 0 only now do we know it.
  const envBefore = { NEXTAUTH_URL: process.env.NEXTAUTH_URL, PUBLIC_ORIGIN: process.env.PUBLIC_ORIGIN };
  if (!cfg.PUBLIC_ORIGIN && !cfg.NEXTAUTH_URL) {
    process.env.PUBLIC_ORIGIN = url;
    process.env.NEXTAUTH_URL = url;
  } else if (!cfg.NEXTAUTH_URL) {
    process.env.NEXTAUTH_URL = publicOrigin(cfg);
  }
  resetConfigCache();
  const config = getConfig();
  const allowedOrigins = new Set([publicOrigin(config)]);

  const io: RimguardIo = new IoServer(server, {
    serveClient: false,
    // Next may own other upgrade requests (HMR in dev); Socket.IO must not destroy them.
    destroyUpgrade: false,
    allowRequest: (req, fn) => fn(originAllowed(req, allowedOrigins) ? null : "origin not allowed", originAllowed(req, allowedOrigins)),
    maxHttpBufferSize: 64 * 1024,
  });
  const auth = installSocketAuth(io);

  const ctx: ServerContext = { config, io, bus: new Bus(), clock: systemClock, services: new Map() };
  setServerContext(ctx);
  const own = [databaseService(), realtimeService(io, () => auth.stop())];
  for (const s of own) ctx.services.set(s.name, s);

  const app = next({ dev, dir, hostname: host, port, quiet: opts.quiet ?? false, httpServer: server });
  (app as unknown as NextUpgradeInternals).didWebSocketSetup = true;
  let services: Service[] = [];
  try {
    await app.prepare();
    if (dev) {
      const upgrade: UpgradeFn = (app as unknown as NextUpgradeInternals).upgradeHandler ?? app.getUpgradeHandler();
      server.on("upgrade", (req, socket, head) => {
        if (req.url?.startsWith("/socket.io")) return;
        void upgrade(req, socket, head);
      });
    }
    const nextHandler = app.getRequestHandler();
    const dbGate = createDatabaseGate(() => pingDatabase());
    handler = async (req, res) => {
      if (!(await dbGate(req, res))) await nextHandler(req, res);
    };
    services = await startServices(ctx, opts);
  } catch (err) {
    await shutdown().catch(() => undefined);
    throw err;
  }

  let stopping: Promise<void> | null = null;
  async function shutdown(): Promise<void> {
    await new Promise<void>((resolve) => {
      server.close(() => resolve());
      server.closeIdleConnections();
      setTimeout(() => {
        server.closeAllConnections();
        resolve();
      }, 3_000).unref();
    });
    log("[server] HTTP closed");
    await stopServices(ctx, services, log);
    await stopServices(ctx, own, log);
    const closeNext = (app as unknown as { close?: () => Promise<void> }).close?.bind(app);
    if (closeNext) {
      await Promise.race([closeNext(), new Promise((r) => setTimeout(r, 5_000).unref())]);
      log("[server] Next closed");
    }
    setServerContext(null);
    for (const [k, v] of Object.entries(envBefore)) {
      if (v === undefined) delete process.env[k];
      else process.env[k] = v;
    }
    resetConfigCache();
  }

  return {
    url,
    port,
    ctx,
    stop: () => (stopping ??= shutdown()),
  };
}

function isMain(): boolean {
  const entry = process.argv[1];
  return !!entry && path.resolve(entry) === fileURLToPath(import.meta.url);
}

/** Stop on SIGINT/SIGTERM; a second signal forces the exit. */
export function exitOnSignals(stop: () => Promise<void>, log = console): void {
  let signalled = 0;
  const onSignal = (sig: NodeJS.Signals) => {
    // One Ctrl-C may arrive twice (the terminal's process group and npm forwarding it).
    if (signalled && Date.now() - signalled < 1_000) return;
    if (signalled) {
      log.warn(`[server] ${sig} again: exiting now`);
      process.exit(1);
    }
    signalled = Date.now();
    log.info(`[server] ${sig}: shutting down (send again to force)`);
    stop().then(
      () => process.exit(0),
      (err: unknown) => {
        log.error("[server] shutdown failed", err);
        process.exit(1);
      },
    );
  };
  process.on("SIGINT", onSignal);
  process.on("SIGTERM", onSignal);
}

if (isMain()) {
  const dev = process.argv.includes("--dev");
  (process.env as Record<string, string>).NODE_ENV = dev ? "development" : "production";
  process.env.NEXT_TELEMETRY_DISABLED = "1";
  loadEnv(REPO_ROOT, dev);
  startServer({ dev }).then(
    (running) => {
      console.info(`[server] Rimguard listening on ${running.url}${dev ? " (development)" : ""}`);
      exitOnSignals(running.stop);
    },
    (err: unknown) => {
      console.error("[server] failed to start:", err instanceof Error ? err.message : err);
      process.exit(1);
    },
  );
}
