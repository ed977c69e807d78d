/**
 * Device credentials as the broker needs them. A device authenticates with MQTT username = key
 * id and password = secret; the store keeps HMAC-SHA256(pepper, secret) only, so a check is one
 * keyed hash and a constant-time compare (a slow password hash per CONNECT would let any client
 * burn the broker's CPU; device secrets are long random strings, not user passwords).
 */
import { createHmac, timingSafeEqual } from "node:crypto";
import type { Clock } from "@/server/context";

export type { CredentialLookup, DeviceCredential } from "@/lib/data/device-credentials";
import type { CredentialLookup, DeviceCredential } from "@/lib/data/device-credentials";

export function hashDeviceSecret(pepper: string, secret: string | Buffer): Buffer {
  return createHmac("sha256", pepper).update(secret).digest();
}

/** Constant-time check of a presented secret against the stored keyed hash. */
export function secretMatches(pepper: string, presented: Buffer | string, stored: Buffer): boolean {
  const h = hashDeviceSecret(pepper, presented);
  return stored.length === h.length && timingSafeEqual(h, stored);
}

/**
 * A device may connect with exactly its bound client id, or the bound id followed by ':' and a
 * suffix (several connections of one gateway). Bound ids contain no ':', so a device can never
 * take, and thereby evict (MQTT 3.1.1 §3.1.4), a client id bound to another credential.
 */
export function clientIdAllowed(clientId: string, cred: Pick<DeviceCredential, "clientId">): boolean {
  if (cred.clientId.length === 0 || cred.clientId.includes(":")) return false;
  return clientId === cred.clientId || (clientId.startsWith(cred.clientId + ":") && clientId.length > cred.clientId.length + 1);
}

/** A lookup in memory (tests, and the cache's backing for a fixed set). */
export class StaticCredentials implements CredentialLookup {
  private readonly byKey = new Map<string, DeviceCredential>();
  constructor(creds: DeviceCredential[] = []) {
    for (const c of creds) this.byKey.set(c.keyId, c);
  }
  set(cred: DeviceCredential): void {
    this.byKey.set(cred.keyId, cred);
  }
  revoke(keyId: string): void {
    const c = this.byKey.get(keyId);
    if (c) this.byKey.set(keyId, { ...c, revoked: true });
  }
  async find(keyId: string): Promise<DeviceCredential | null> {
    return this.byKey.get(keyId) ?? null;
  }
}

/**
 * A short-lived cache in front of the database: a revoked credential is refused at the latest
 * `ttlMs` after revocation. Misses are cached too, so a flood of unknown key ids costs one query
 * per key per TTL; the cache is bounded.
 */
export class CachedCredentials implements CredentialLookup {
  private readonly cache = new Map<string, { at: number; value: DeviceCredential | null }>();
  constructor(
    private readonly inner: CredentialLookup,
    private readonly clock: Pick<Clock, "now">,
    private readonly ttlMs = 5_000,
    private readonly maxEntries = 10_000,
  ) {}

  async find(keyId: string): Promise<DeviceCredential | null> {
    const now = this.clock.now();
    const hit = this.cache.get(keyId);
    if (hit && now - hit.at < this.ttlMs) return hit.value;
    const value = await this.inner.find(keyId);
    if (this.cache.size >= this.maxEntries) {
      for (const [k, v] of this.cache) if (now - v.at >= this.ttlMs) this.cache.delete(k);
      if (this.cache.size >= this.maxEntries) this.cache.clear();
    }
    this.cache.set(keyId, { at: now, value });
    return value;
  }

  invalidate(keyId?: string): void {
    if (keyId === undefined) this.cache.clear();
    else this.cache.delete(keyId);
  }
}
