"use client";
/**
 * One shared Socket.IO connection per browser tab. Every hook that listens registers its
 * handler here and removes it in its effect cleanup; nothing opens a second connection.
 */
import { io, type Socket } from "socket.io-client";
import type { ClientToServerEvents, ServerToClientEvents } from "@/lib/realtime/events";

export type RimSocket = Socket<ServerToClientEvents, ClientToServerEvents>;

let socket: RimSocket | null = null;

export function getSocket(): RimSocket {
  if (!socket) {
    socket = io({ path: "/socket.io", transports: ["websocket"], withCredentials: true });
    socket.on("session:ended", () => {
      // The server closes the socket next; a reload sends the user to sign-in or the new tenant.
      socket?.disconnect();
      socket = null;
      if (typeof window !== "undefined") window.location.reload();
    });
  }
  return socket;
}

/** Close the shared socket (tenant switch, sign-out): the next getSocket() reconnects. */
export function closeSocket(): void {
  socket?.disconnect();
  socket = null;
}
