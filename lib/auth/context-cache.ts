/**
 * A few seconds of memory for "who is this user in this tenant", so a busy page does not hit the
 * database per request, while a revoked membership still stops working within CONTEXT_TTL_MS —
 * and at once when the change goes through `notifyUserChanged()` (lib/data/server-context.ts).
 *
 * During a database outage (a connection failure, never an answer such as "not a member") the
 * last membership read successfully is used past the TTL, marked with `membershipAsOf`, so an
 * operator can still acknowledge and shelve alarms (the alarm journal holds them; the alarm
 * service records how they were authorised and checks the membership again when it writes them).
 */
import type { TenantContext } from "@/lib/domain/types";
import { isDatabaseUnavailable } from "@/lib/data/db/unavailable";
import { sessionEvents } from "@/lib/data/server-context";
import { loadTenantContext } from "@/lib/data/auth";

export const CONTEXT_TTL_MS = 3_000;
const MAX_ENTRIES = 10_000;

interface Entry {
  at: number;
  value: TenantContext | null;
}

const cache = new Map<string, Entry>();
/** The last successful read per user, tenant and session version that found a membership. */
const lastKnown = new Map<string, { at: number; value: TenantContext }>();
let subscribed = false;

function subscribe(): void {
  if (subscribed) return;
  subscribed = true;
  sessionEvents().on("user:changed", (userId) => {
    for (const map of [cache, lastKnown]) for (const key of map.keys()) if (key.startsWith(`${userId}:`)) map.delete(key);
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
  let value: TenantContext | null;
  try {
    value = await loadTenantContext(userId, tenantId, sessionVersion, sid);
  } catch (err) {
    const known = isDatabaseUnavailable(err) ? lastKnown.get(key) : undefined;
    if (!known) throw err;
    return { ...known.value, membershipAsOf: known.at };
  }
  if (cache.size > MAX_ENTRIES) cache.clear();
  cache.set(key, { at: now, value });
  if (value) {
    if (lastKnown.size > MAX_ENTRIES) lastKnown.clear();
    lastKnown.set(key, { at: now, value });
  } else lastKnown.delete(key);
  return value;
}

export function clearContextCache(): void {
  cache.clear();
  lastKnown.clear();
}
