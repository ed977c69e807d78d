/**
 * What the long-running services of the custom server share. server/index.ts builds one
 * ServerContext and hands it to each service's start function; tests build their own with a
 * fake clock. Every service returns a `Service` so shutdown and /api/health treat them alike.
 */
import { EventEmitter } from "node:events";
import type { Server as IoServer } from "socket.io";
import type { Config } from "@/lib/config";
import type { Service } from "@/lib/domain/services";
export type { HealthLevel, Service, ServiceHealth } from "@/lib/domain/services";
import type {
  ClientToServerEvents,
  InterServerEvents,
  ServerToClientEvents,
  SocketData,
} from "@/lib/domain/events";
import type { AlarmDto, LoopStateDto } from "@/lib/domain/types";

export type RimguardIo = IoServer<ClientToServerEvents, ServerToClientEvents, InterServerEvents, SocketData>;

/** An injectable clock: real time in production, a fake that tests advance by hand. */
export interface Clock {
  now(): number;
  setTimeout(fn: () => void, ms: number): { cancel(): void };
  setInterval(fn: () => void, ms: number): { cancel(): void };
}

export const systemClock: Clock = {
  now: () => Date.now(),
  setTimeout(fn, ms) {
    const h = setTimeout(fn, ms);
    h.unref?.();
    return { cancel: () => clearTimeout(h) };
  },
  setInterval(fn, ms) {
    const h = setInterval(fn, ms);
    h.unref?.();
    return { cancel: () => clearInterval(h) };
  },
};

/** Events that services publish to each other inside one process. */
export interface BusEvents {
  /** A tracker produced a new estimate (at the loop's estimation period). */
  "tracker:update": [state: LoopStateDto];
  /** An alarm changed state (after it is journalled). */
  "alarm:changed": [alarm: AlarmDto];
  /** Loop configuration changed (an engineer edited a loop or its thresholds). */
  "loop:config-changed": [loopId: number];
  /** Alarm policies changed for a tenant. */
  "policy:changed": [tenantId: number];
  /** The work list's engineering settings changed for a tenant (lib/work-list/settings.ts). */
  "work-list:settings-changed": [tenantId: number];
}

export class Bus extends EventEmitter<BusEvents> {}


export interface ServerContext {
  config: Config;
  io: RimguardIo | null;
  bus: Bus;
  clock: Clock;
  /** Registered services by name, for health and for services that call each other. */
  services: Map<string, Service>;
}
