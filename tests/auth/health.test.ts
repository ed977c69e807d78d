/**
 * GET /api/health's aggregation (lib/health.ts): the overall status is the worst service's;
 * a service that throws or does not answer in time counts as down; no server context is down.
 * The route maps ok/degraded to 200 and critical/down to 503 (checked end to end in socket.test.ts
 * for a running server).
 */
import { describe, expect, it } from "vitest";
import { collectHealth, worst } from "@/lib/health";
import { Bus, systemClock, type ServerContext, type Service, type ServiceHealth } from "@/server/context";
import { getConfig } from "@/lib/config";

function ctxWith(services: Service[]): ServerContext {
  return { config: getConfig(), io: null, bus: new Bus(), clock: systemClock, services: new Map(services.map((s) => [s.name, s])) };
}
const svc = (name: string, health: () => ServiceHealth | Promise<ServiceHealth>): Service => ({ name, health, stop: async () => {} });

describe("health aggregation", () => {
  it("orders levels ok < degraded < critical < down", () => {
    expect(worst([])).toBe("ok");
    expect(worst(["ok", "degraded"])).toBe("degraded");
    expect(worst(["degraded", "critical", "ok"])).toBe("critical");
    expect(worst(["down", "critical"])).toBe("down");
  });

  it("reports each service by name with its detail, and the worst status overall", async () => {
    const r = await collectHealth(
      ctxWith([
        svc("database", () => ({ status: "ok", detail: { latencyMs: 1.2 } })),
        svc("broker", async () => ({ status: "degraded", detail: { clients: 3 } })),
      ]),
    );
    expect(r.status).toBe("degraded");
    expect(r.database).toEqual({ status: "ok", latencyMs: 1.2 });
    expect(r.broker).toEqual({ status: "degraded", clients: 3 });
  });

  it("a throwing service is down with its message", async () => {
    const r = await collectHealth(
      ctxWith([
        svc("alarms", () => {
          throw new Error("journal unreadable");
        }),
      ]),
    );
    expect(r.status).toBe("down");
    expect(r.alarms).toEqual({ status: "down", error: "journal unreadable" });
  });

  it("a service that does not answer within 2 s is down", async () => {
    const r = await collectHealth(ctxWith([svc("slow", () => new Promise<ServiceHealth>(() => {}))]));
    expect(r.status).toBe("down");
    expect(String((r.slow as { error: string }).error)).toMatch(/no answer/);
  }, 10_000);

  it("without a running server the status is down", async () => {
    expect((await collectHealth(null)).status).toBe("down");
  });
});
