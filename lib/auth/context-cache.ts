/**
 * A few seconds of memory for "who is this user in this tenant", so a busy page does not hit the
 * database per request, while a revoked membership still stops working within CONTEXT_TTL_MS —
 * and at once when the change goes through `notifyUserChanged()` (lib/server-context.ts).
 */
import type { TenantContext } from "@/lib/types";
import { sessionEvents } from "@/lib/server-context";
import { loadTenantContext } from "./store";

export const CONTEXT_TTL_MS = 3_000;

interface Entry {
  at: number;
  value: TenantContext | null;
}

const cache = new Map<string, Entry>();
let subscribed = false;

function subscribe(): void {
  if (subscribed) return;
  subscribed = true;
  sessionEvents().on("user:changed", (userId) => {
    for (const key of cache.keys()) if (key.startsWith(`${userId}:`)) cache.delete(key);
  });
}

/**
 * The user's context in a tenant from the database (cached briefly); null = no access. With the
 * session id, a session signed out before a restart (session_revocations) is refused too.
 */
export async function cachedTenantContext(
  userId: number,
  tenantId: number,
  sessionVersion: number,
  sid?: string,
  now: number = Date.now(),
): Promise<TenantContext | null> {
  subscribe();
  const key = `${userId}:${tenantId}:${sessionVersion}:${sid ?? ""}`;
  const hit = cache.get(key);
  if (hit && now - hit.at < CONTEXT_TTL_MS) return hit.value;
  const value = await loadTenantContext(userId, tenantId, sessionVersion, sid);
  if (cache.size > 10_000) cache.clear();
  cache.set(key, { at: now, value });
  return value;
}

export function clearContextCache(): void {
  cache.clear();
}
