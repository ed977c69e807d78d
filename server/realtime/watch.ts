/**
 * `loop:watch` / `loop:unwatch` (docs/architecture.md §8): a socket joins a loop's room only when the
 * loop belongs to the socket's tenant (socket.data.tenantId, set by the handshake); otherwise it
 * gets `{ ok: false, error }` with the same words as for a loop that does not exist.
 */
import { loopRoom, type WatchReply } from "@/lib/domain/events";
import type { Socket } from "socket.io";
import type { ClientToServerEvents, InterServerEvents, ServerToClientEvents, SocketData } from "@/lib/domain/events";
import type { RimguardIo } from "@/server/context";

type RgSocket = Socket<ClientToServerEvents, ServerToClientEvents, InterServerEvents, SocketData>;

export interface WatchOptions {
  /** The tenant owning a loop, or null when there is no such loop. */
  loopTenant(loopId: number): number | null;
  /** The site of a loop (checked against a site-scoped socket's sites). */
  loopSite?(loopId: number): number | null;
  /** Loops one socket may watch at once. */
  maxWatchesPerSocket?: number;
}

export const WATCH_REFUSED = "Loop not found.";

export function installWatch(io: RimguardIo, opts: WatchOptions): () => void {
  const max = opts.maxWatchesPerSocket ?? 50;
  const attached = new Map<RgSocket, { watch: (...a: unknown[]) => void; unwatch: (...a: unknown[]) => void }>();

  const attach = (socket: RgSocket) => {
    if (attached.has(socket)) return;
    const watching = new Set<number>();
    const watch = (loopId: unknown, reply: unknown) => {
      const answer = (r: WatchReply) => {
        if (typeof reply === "function") (reply as (r: WatchReply) => void)(r);
      };
      if (typeof loopId !== "number" || !Number.isSafeInteger(loopId) || loopId <= 0) return answer({ ok: false, error: "loopId must be a positive integer." });
      const tenantId = socket.data.tenantId;
      if (!Number.isInteger(tenantId) || opts.loopTenant(loopId) !== tenantId) return answer({ ok: false, error: WATCH_REFUSED });
      const scope = socket.data.siteIds;
      if (scope && !scope.includes(opts.loopSite?.(loopId) ?? -1)) return answer({ ok: false, error: WATCH_REFUSED });
      if (!watching.has(loopId) && watching.size >= max) return answer({ ok: false, error: `At most ${max} loops can be watched at once.` });
      watching.add(loopId);
      void socket.join(loopRoom(loopId));
      answer({ ok: true, loopId });
    };
    const unwatch = (loopId: unknown) => {
      if (typeof loopId !== "number" || !watching.has(loopId)) return;
      watching.delete(loopId);
      void socket.leave(loopRoom(loopId));
    };
    socket.on("loop:watch", watch as never);
    socket.on("loop:unwatch", unwatch as never);
    socket.once("disconnect", () => attached.delete(socket));
    attached.set(socket, { watch, unwatch });
  };

  for (const s of io.of("/").sockets.values()) attach(s);
  io.on("connection", attach);
  return () => {
    io.off("connection", attach);
    for (const [socket, h] of attached) {
      socket.off("loop:watch", h.watch as never);
      socket.off("loop:unwatch", h.unwatch as never);
    }
    attached.clear();
  };
}
