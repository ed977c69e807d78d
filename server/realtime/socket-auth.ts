/**
 * Who may hold a Socket.IO connection (docs/architecture.md §8): the handshake must carry a valid
 * next-auth session cookie and come from the console's own origin; the socket then joins its
 * tenant's room. Afterwards the membership is re-checked every few seconds and at once when a
 * user's rights change (a changed role also ends the socket), a session is signed out, or it switches tenant: the client first gets
 * `session:ended`, then the socket is closed.
 */
import type { IncomingMessage } from "node:http";
import type { Socket } from "socket.io";
import type {
  ClientToServerEvents,
  InterServerEvents,
  ServerToClientEvents,
  SocketData,
} from "@/lib/domain/events";
import { claimsFromCookieHeader, type SessionClaims } from "@/lib/auth/session-token";
import { loadTenantContext } from "@/lib/data/auth";
import { siteRoom, tenantRoom } from "@/lib/domain/events";
import { sessionEvents } from "@/lib/data/server-context";
import type { RimguardIo } from "@/server/context";
import type { TenantContext } from "@/lib/domain/types";

export const SOCKET_RECHECK_MS = 5_000;

/** Errors the browser sees in `connect_error` (err.message). */
export const HANDSHAKE_ERRORS = {
  unauthenticated: "unauthenticated",
  forbidden: "forbidden",
} as const;

/**
 * Origin check for the HTTP request that opens the Engine.IO session. Browsers always send Origin
 * on WebSocket upgrades and on cross-site requests; a same-origin polling GET may omit it, which
 * Fetch Metadata (`Sec-Fetch-Site: same-origin`) then vouches for. A non-browser client without
 * either still needs a valid session cookie.
 */
export function originAllowed(req: IncomingMessage, allowed: ReadonlySet<string>): boolean {
  const origin = req.headers.origin;
  if (origin) return allowed.has(origin);
  const site = req.headers["sec-fetch-site"];
  return site === undefined || site === "same-origin" || site === "none";
}

interface SocketSession {
  claims: SessionClaims;
}

type RgSocket = Socket<ClientToServerEvents, ServerToClientEvents, InterServerEvents, SocketData>;

export interface SocketAuth {
  /** Re-check every connected socket now (also runs on a timer). */
  recheckAll(): Promise<void>;
  stop(): void;
}

/**
 * Install the handshake middleware and the revocation watch on `io`. `lookup` reads the user's
 * tenant context from the database (default: uncached, so a revocation shows at the next check).
 */
export function installSocketAuth(
  io: RimguardIo,
  opts: {
    lookup?: (userId: number, tenantId: number, sessionVersion: number, sid?: string) => Promise<TenantContext | null>;
    recheckMs?: number;
  } = {},
): SocketAuth {
  const lookup = opts.lookup ?? loadTenantContext;
  const sessions = new WeakMap<RgSocket, SocketSession>();

  io.use((socket, next) => {
    void (async () => {
      const claims = await claimsFromCookieHeader(socket.request.headers.cookie);
      if (!claims) return next(new Error(HANDSHAKE_ERRORS.unauthenticated));
      const ctx = await lookup(claims.userId, claims.tenantId, claims.sessionVersion, claims.sessionId);
      if (!ctx) return next(new Error(HANDSHAKE_ERRORS.forbidden));
      socket.data.userId = ctx.userId;
      socket.data.tenantId = ctx.tenantId;
      socket.data.role = ctx.role;
      socket.data.siteIds = ctx.siteIds ?? null;
      sessions.set(socket, { claims });
      next();
    })().catch((err: unknown) => {
      console.error("[realtime] handshake check failed", err);
      next(new Error(HANDSHAKE_ERRORS.forbidden));
    });
  });

  io.on("connection", (socket) => {
    // A site-scoped member gets the live states of its sites only (lib/data/tenancy.ts site scope).
    if (socket.data.siteIds) for (const siteId of socket.data.siteIds) void socket.join(siteRoom(siteId));
    else void socket.join(tenantRoom(socket.data.tenantId));
  });

  const end = (socket: RgSocket, reason: string) => {
    socket.emit("session:ended", reason);
    // Let the event flush before the transport closes.
    setTimeout(() => socket.disconnect(true), 50).unref();
  };

  const check = async (sockets: RgSocket[]) => {
    const byKey = new Map<string, Promise<TenantContext | null>>();
    await Promise.all(
      sockets.map(async (socket) => {
        const s = sessions.get(socket);
        if (!s) return end(socket, "Session not recognised.");
        if (s.claims.expiresAt <= Date.now()) return end(socket, "Session expired. Sign in again.");
        const { userId, tenantId, sessionVersion, sessionId } = s.claims;
        const key = `${userId}:${tenantId}:${sessionVersion}:${sessionId}`;
        let p = byKey.get(key);
        if (!p) {
          p = lookup(userId, tenantId, sessionVersion, sessionId).catch(() => null);
          byKey.set(key, p);
        }
        const ctx = await p;
        if (!ctx) return end(socket, "Your access to this tenant was withdrawn or your session ended.");
        // A demotion (or promotion) ends the socket too: the console reconnects and reloads what
        // the new role may see, instead of keeping what the old role subscribed to.
        if (ctx.role !== socket.data.role) return end(socket, "Your role changed; reconnecting.");
        if (String(ctx.siteIds ?? null) !== String(socket.data.siteIds ?? null)) return end(socket, "Your sites changed; reconnecting.");
      }),
    );
  };

  const recheckAll = async () => {
    await check([...io.of("/").sockets.values()]);
  };

  const forSession = (sid: string) =>
    [...io.of("/").sockets.values()].filter((s) => sessions.get(s)?.claims.sessionId === sid);

  const onUserChanged = (userId: number) => {
    void check([...io.of("/").sockets.values()].filter((s) => s.data.userId === userId));
  };
  const onRevoked = (sid: string) => {
    for (const s of forSession(sid)) end(s, "Signed out.");
  };
  const onMoved = (sid: string) => {
    for (const s of forSession(sid)) end(s, "Switched to another tenant; reconnecting.");
  };
  const events = sessionEvents();
  events.on("user:changed", onUserChanged);
  events.on("session:revoked", onRevoked);
  events.on("session:moved", onMoved);

  let running = false;
  const timer = setInterval(() => {
    if (running) return;
    running = true;
    recheckAll()
      .catch((err: unknown) => console.error("[realtime] socket re-check failed", err))
      .finally(() => {
        running = false;
      });
  }, opts.recheckMs ?? SOCKET_RECHECK_MS);
  timer.unref();

  return {
    recheckAll,
    stop() {
      clearInterval(timer);
      events.off("user:changed", onUserChanged);
      events.off("session:revoked", onRevoked);
      events.off("session:moved", onMoved);
    },
  };
}
