/** Health of the running server, gathered from its registered services (for GET /api/health). */
import type { HealthLevel, ServiceHealth } from "@/lib/domain/services";
import type { ServerContext } from "@/lib/data/server-context";

const ORDER: HealthLevel[] = ["ok", "degraded", "critical", "down"];

export function worst(levels: HealthLevel[]): HealthLevel {
  return levels.reduce<HealthLevel>((w, l) => (ORDER.indexOf(l) > ORDER.indexOf(w) ? l : w), "ok");
}

export interface HealthReport {
  status: HealthLevel;
  time: string;
  uptimeS: number;
  /** One entry per registered service, by name (database, broker, realtime, pipeline, alarms, ...). */
  [service: string]: unknown;
}

const TIMEOUT_MS = 2_000;

async function probe(fn: () => ServiceHealth | Promise<ServiceHealth>): Promise<ServiceHealth> {
  let timer: NodeJS.Timeout | undefined;
  try {
    return await Promise.race([
      Promise.resolve().then(fn),
      new Promise<ServiceHealth>((resolve) => {
        timer = setTimeout(() => resolve({ status: "down", detail: { error: `no answer within ${TIMEOUT_MS} ms` } }), TIMEOUT_MS);
      }),
    ]);
  } catch (err) {
    return { status: "down", detail: { error: err instanceof Error ? err.message : String(err) } };
  } finally {
    if (timer) clearTimeout(timer);
  }
}

export async function collectHealth(ctx: ServerContext | null): Promise<HealthReport> {
  const base = { time: new Date().toISOString(), uptimeS: Math.round(process.uptime()) };
  if (!ctx) {
    return { status: "down", ...base, error: "The Rimguard server is not running in this process." };
  }
  const entries = await Promise.all(
    [...ctx.services.values()].map(async (s) => [s.name, await probe(() => s.health())] as const),
  );
  const report: HealthReport = { status: worst(entries.map(([, h]) => h.status)), ...base };
  for (const [name, h] of entries) report[name] = redactErrors({ status: h.status, ...(h.detail ?? {}) });
  return report;
}

/**
 * The health answer is public, and a service's last error is often a driver's message that names
 * an internal address ("connect ECONNREFUSED 10.0.0.5:3306", a socket path). Every string under a
 * key that names an error keeps its words but loses the addresses.
 */
export function redactAddresses(msg: string): string {
  return msg
    .replace(/\[[0-9a-f:.]+\](:\d+)?/gi, "<address>")
    .replace(/\b\d{1,3}(\.\d{1,3}){3}(:\d+)?\b/g, "<address>")
    .replace(/(^|[\s(])\/[^\s:)]+\.sock\b/g, "$1<address>")
    .replace(/\b[a-z0-9][a-z0-9.-]*:\d{2,5}\b/gi, "<address>");
}

function redactErrors<T>(value: T, key = ""): T {
  if (typeof value === "string") return (/error/i.test(key) ? redactAddresses(value) : value) as T;
  if (Array.isArray(value)) return value.map((v) => redactErrors(v, key)) as T;
  if (value && typeof value === "object") {
    const out: Record<string, unknown> = {};
    for (const [k, v] of Object.entries(value)) out[k] = redactErrors(v, k);
    return out as T;
  }
  return value;
}
