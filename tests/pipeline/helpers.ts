/** Shared fixtures for the pipeline suites: a context with a hand-driven clock, device credentials. */
import { Bus, type Clock, type ServerContext } from "@/server/context";
import { configSchema } from "@/lib/config";
import { hashDeviceSecret, type DeviceCredential } from "@/server/broker/credentials";

export const TEST_PEPPER = "test-pepper-0123456789abcdef";

/** A clock that moves only when the test says so; timers fire on `advance`. */
export class ManualClock implements Clock {
  private t: number;
  private timers: { at: number; every: number | null; fn: () => void; id: number }[] = [];
  private seq = 0;
  constructor(start = Date.UTC(2026, 0, 5, 8, 0, 0)) {
    this.t = start;
  }
  now(): number {
    return this.t;
  }
  setTimeout(fn: () => void, ms: number) {
    const id = ++this.seq;
    this.timers.push({ at: this.t + ms, every: null, fn, id });
    return { cancel: () => void (this.timers = this.timers.filter((x) => x.id !== id)) };
  }
  setInterval(fn: () => void, ms: number) {
    const id = ++this.seq;
    this.timers.push({ at: this.t + ms, every: ms, fn, id });
    return { cancel: () => void (this.timers = this.timers.filter((x) => x.id !== id)) };
  }
  /** Move time forward, firing due timers in order. */
  advance(ms: number): void {
    const end = this.t + ms;
    for (;;) {
      const due = this.timers.filter((x) => x.at <= end).sort((a, b) => a.at - b.at)[0];
      if (!due) break;
      this.t = due.at;
      if (due.every !== null) due.at += Math.max(1, due.every);
      else this.timers = this.timers.filter((x) => x.id !== due.id);
      due.fn();
    }
    this.t = end;
  }
}

export function testContext(clock: Clock, env: Record<string, string> = {}): ServerContext {
  const config = configSchema.parse({ NODE_ENV: "test", DEVICE_SECRET_PEPPER: TEST_PEPPER, ...env });
  return { config, io: null, bus: new Bus(), clock, services: new Map() };
}

export function credential(p: {
  keyId: string;
  secret: string;
  tenantId: number;
  tenantSlug: string;
  siteId?: number | null;
  siteSlug?: string | null;
  clientId?: string;
  revoked?: boolean;
}): DeviceCredential {
  return {
    keyId: p.keyId,
    tenantId: p.tenantId,
    tenantSlug: p.tenantSlug,
    siteId: p.siteId ?? null,
    siteSlug: p.siteSlug ?? null,
    clientId: p.clientId ?? p.keyId,
    secretHash: hashDeviceSecret(TEST_PEPPER, p.secret),
    revoked: p.revoked ?? false,
  };
}
