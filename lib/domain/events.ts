/**
 * The Socket.IO event map (docs/architecture.md §8, a contract). Server and browser both import
 * these types; a payload change is made here and nowhere else.
 */
import type { LoopFinding } from "./findings";
import type { AlarmDto, LoopStateBrief, LoopStateDto, SampleDto } from "./types";

export type WatchReply = { ok: true; loopId: number } | { ok: false; error: string };

export interface ServerToClientEvents {
  /**
   * A batch of loop summaries of the client's tenant, at most every 500 ms per tenant: the latest
   * LoopStateBrief of every loop that changed since the last batch (server/realtime/summary.ts).
   */
  "loop:state": (batch: LoopStateBrief[]) => void;
  /**
   * The full state (with covariances, zeros, polynomial, forecast) of a loop the client watches
   * (`loop:watch`), sent with the same pacing as `loop:state` whenever the loop changed.
   */
  "loop:detail": (state: LoopStateDto) => void;
  /** Batched full-rate samples of one watched loop. */
  "loop:samples": (batch: { loopId: number; samples: SampleDto[] }) => void;
  /** A loop of the client's tenant has a new routine-data finding (server/assessment; engineering work, not an alarm). */
  "loop:finding": (finding: LoopFinding) => void;
  /** An alarm of the client's tenant changed state. */
  "alarm:changed": (alarm: AlarmDto) => void;
  /** The session was signed out, demoted or its membership revoked; the socket closes next. */
  "session:ended": (reason: string) => void;
}

export interface ClientToServerEvents {
  /** Subscribe to full-rate samples of one loop; refused (ok: false) for another tenant's loop. */
  "loop:watch": (loopId: number, reply: (r: WatchReply) => void) => void;
  "loop:unwatch": (loopId: number) => void;
}

export interface InterServerEvents {
  ping: () => void;
}

export interface SocketData {
  userId: number;
  tenantId: number;
  role: import("./types").Role;
  /** Site scope of the membership; null = every site (the socket joins the tenant room). */
  siteIds?: number[] | null;
}

/** Room names: one per tenant, one per watched loop. */
export const tenantRoom = (tenantId: number) => `tenant:${tenantId}`;
export const loopRoom = (loopId: number) => `loop:${loopId}`;
/** One room per site, for members scoped to sites (they do not join the tenant room). */
export const siteRoom = (siteId: number) => `site:${siteId}`;
