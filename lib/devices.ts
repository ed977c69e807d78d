/**
 * Device credentials for MQTT publishers. A device connects with username = keyId and
 * password = secret; only HMAC-SHA256(pepper, secret) is stored, so a database dump does not
 * reveal secrets, and verification is a constant-time comparison.
 */
import { createHmac, randomBytes, timingSafeEqual } from "node:crypto";
import { getConfig } from "@/lib/config";

export interface NewDeviceSecret {
  /** Public identifier (MQTT username). */
  keyId: string;
  /** Shown once to the admin (MQTT password). */
  secret: string;
}

/** A fresh key id and secret (256 bits of randomness in the secret). */
export function generateDeviceSecret(): NewDeviceSecret {
  return {
    keyId: `rgk_${randomBytes(9).toString("base64url")}`,
    secret: `rgs_${randomBytes(32).toString("base64url")}`,
  };
}

/** HMAC-SHA256 hex of a device secret, keyed with DEVICE_SECRET_PEPPER. */
export function hashDeviceSecret(secret: string, pepper: string = getConfig().DEVICE_SECRET_PEPPER): string {
  return createHmac("sha256", pepper).update(secret, "utf8").digest("hex");
}

/** Does `secret` match the stored hash? Constant-time; false for a malformed hash. */
export function verifyDeviceSecret(
  secret: string,
  storedHash: string,
  pepper: string = getConfig().DEVICE_SECRET_PEPPER,
): boolean {
  if (!/^[0-9a-f]{64}$/.test(storedHash)) return false;
  const a = Buffer.from(hashDeviceSecret(secret, pepper), "hex");
  const b = Buffer.from(storedHash, "hex");
  return a.length === b.length && timingSafeEqual(a, b);
}
