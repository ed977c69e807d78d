/**
 * The bridge between the custom server and the route handlers running in the same Node process,
 * and the typed access to its running services (`runningService`, `alarmApi`, `mailApi`): route
 * handlers never import server/ code, they reach the live services through here.
 * Next bundles route handlers separately, so a module imported by both may exist twice; state that
 * both sides must see lives on `globalThis.__rimguard` and is reached only through these functions.
 */
import { EventEmitter } from "node:events";
import { HttpError } from "@/lib/domain/errors";
import type { AlarmApi as AlarmServiceApi, MailApi, ObjectStoreApi, PipelineApi, Service } from "@/lib/domain/services";

/** What route handlers see of the running server's context (server/context.ts builds the whole). */
export interface ServerContext {
  services: ReadonlyMap<string, Service>;
  bus: { emit(event: "loop:config-changed" | "work-list:settings-changed", id: number): boolean };
}

/** The typed services a route handler may reach by name. */
export interface RunningServices {
  alarms: AlarmServiceApi;
  mail: MailApi;
  pipeline: Partial<PipelineApi>;
  objectstore: ObjectStoreApi;
}

export interface SessionEvents {
  /** A user's sessions or memberships changed (sign-out everywhere, demotion, revocation). */
  "user:changed": [userId: number];
  /** One session (by its session id) was signed out. */
  "session:revoked": [sid: string];
  /** One session (by its session id) switched tenant: its sockets must leave the old tenant. */
  "session:moved": [sid: string];
}

interface RimguardGlobal {
  ctx: ServerContext | null;
  sessionEvents: EventEmitter<SessionEvents>;
  /** Session ids signed out before their expiry: sid -> expiry (epoch ms). */
  revokedSessions: Map<string, number>;
}

const g = globalThis as typeof globalThis & { __rimguard?: RimguardGlobal };

function state(): RimguardGlobal {
  if (!g.__rimguard) {
    const sessionEvents = new EventEmitter<SessionEvents>();
    sessionEvents.setMaxListeners(100);
    g.__rimguard = { ctx: null, sessionEvents, revokedSessions: new Map() };
  }
  return g.__rimguard;
}

/** Called once by server/index.ts after it built the context (null on shutdown). */
export function setServerContext(ctx: ServerContext | null): void {
  state().ctx = ctx;
}

/** The running server's context, or null when no custom server runs (e.g. `next build`). */
export function getServerContext(): ServerContext | null {
  return state().ctx;
}

/**
 * A running service by name, typed, or null when this process runs without it (or without a
 * server). The one place that casts what the server registered.
 */
export function runningService<K extends keyof RunningServices>(name: K): (RunningServices[K] & Service) | null {
  return (state().ctx?.services.get(name) as (RunningServices[K] & Service) | undefined) ?? null;
}

export type AlarmApi = Pick<
  AlarmServiceApi,
  "list" | "get" | "detail" | "acknowledge" | "shelve" | "unshelve" | "removeFromService" | "returnToService" | "kpis" | "getPolicy" | "putPolicy"
>;

/** The running alarm service, or a 503 when this process runs without it. */
export function alarmApi(): AlarmApi {
  const svc = runningService("alarms");
  if (!svc || typeof svc.acknowledge !== "function") throw new HttpError(503, "The alarm service is not running.");
  return svc;
}

/** The running mail service (its outbox), or a 503. */
export function mailApi(): Pick<MailApi, "outbox" | "outboxFor" | "sinkPort"> {
  const svc = runningService("mail");
  if (!svc || typeof svc.outboxFor !== "function") throw new HttpError(503, "The mail service is not running.");
  return svc;
}

export function sessionEvents(): EventEmitter<SessionEvents> {
  return state().sessionEvents;
}

/** Mark one session as signed out until its natural expiry. */
export function revokeSession(sid: string, expiresAtMs: number): void {
  const revoked = state().revokedSessions;
  const now = Date.now();
  for (const [id, exp] of revoked) if (exp <= now) revoked.delete(id);
  revoked.set(sid, expiresAtMs);
  state().sessionEvents.emit("session:revoked", sid);
}

export function isSessionRevoked(sid: string | undefined): boolean {
  if (!sid) return false;
  const exp = state().revokedSessions.get(sid);
  return exp !== undefined && exp > Date.now();
}

/** Tell the socket layer (and the guard's cache) that a user's rights changed. */
export function notifyUserChanged(userId: number): void {
  state().sessionEvents.emit("user:changed", userId);
}
