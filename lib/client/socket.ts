"use client";
/**
 * One shared Socket.IO connection per browser tab. Every hook that listens registers its
 * handler here and removes it in its effect cleanup; nothing opens a second connection.
 * Watching a loop (`loop:watch`) is counted here too: several hooks of one page may watch the
 * same loop, the server hears one watch and one unwatch, and every watch is renewed after a
 * reconnect.
 */
import "client-only";
import { io, type Socket } from "socket.io-client";
import type { ClientToServerEvents, ServerToClientEvents, WatchReply } from "@/lib/domain/events";

export type RimSocket = Socket<ServerToClientEvents, ClientToServerEvents>;

let socket: RimSocket | null = null;

interface Watch {
  count: number;
  reply: WatchReply | null;
  listeners: Set<(r: WatchReply) => void>;
}
const watches = new Map<number, Watch>();

function sendWatch(s: RimSocket, loopId: number): void {
  s.emit("loop:watch", loopId, (r) => {
    const w = watches.get(loopId);
    if (!w) return;
    w.reply = r;
    for (const fn of w.listeners) fn(r);
  });
}

export function getSocket(): RimSocket {
  if (!socket) {
    const s: RimSocket = io({ path: "/socket.io", transports: ["websocket"], withCredentials: true });
    socket = s;
    s.on("connect", () => {
      for (const loopId of watches.keys()) sendWatch(s, loopId);
    });
    s.on("session:ended", () => {
      // The server closes the socket next; a reload sends the user to sign-in or the new tenant.
      s.disconnect();
      if (socket === s) socket = null;
      if (typeof window !== "undefined") window.location.reload();
    });
  }
  return socket;
}

/**
 * Watch a loop (full-rate `loop:samples` and its full state as `loop:detail`) until the returned
 * function is called. `onReply` hears the server's answer (also the one already received).
 */
export function watchLoop(loopId: number, onReply?: (r: WatchReply) => void): () => void {
  const s = getSocket();
  let w = watches.get(loopId);
  if (!w) {
    w = { count: 0, reply: null, listeners: new Set() };
    watches.set(loopId, w);
    if (s.connected) sendWatch(s, loopId);
  }
  w.count++;
  if (onReply) {
    w.listeners.add(onReply);
    if (w.reply) onReply(w.reply);
  }
  const mine = w;
  let done = false;
  return () => {
    if (done) return;
    done = true;
    if (onReply) mine.listeners.delete(onReply);
    mine.count--;
    if (mine.count === 0 && watches.get(loopId) === mine) {
      watches.delete(loopId);
      socket?.emit("loop:unwatch", loopId);
    }
  };
}

/** Close the shared socket (tenant switch, sign-out): the next getSocket() reconnects. */
export function closeSocket(): void {
  socket?.disconnect();
  socket = null;
}
