import { describe, expect, it } from "vitest";
import { generateDeviceSecret, hashDeviceSecret, verifyDeviceSecret } from "@/lib/devices";

describe("device secrets", () => {
  it("hash with HMAC-SHA256 (RFC 4231, test case 2)", () => {
    // RFC 4231 section 4.3: key "Jefe", data "what do ya want for nothing?"
    expect(hashDeviceSecret("what do ya want for nothing?", "Jefe")).toBe(
      "5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843",
    );
  });

  it("verify the right secret only, with the right pepper only", () => {
    const { keyId, secret } = generateDeviceSecret();
    expect(keyId).toMatch(/^rgk_[A-Za-z0-9_-]{12}$/);
    expect(secret.length).toBeGreaterThanOrEqual(40);
    const pepper = "a-test-pepper-of-some-length";
    const hash = hashDeviceSecret(secret, pepper);
    expect(verifyDeviceSecret(secret, hash, pepper)).toBe(true);
    expect(verifyDeviceSecret(`${secret}x`, hash, pepper)).toBe(false);
    expect(verifyDeviceSecret(secret, hash, "another-pepper-value")).toBe(false);
    expect(verifyDeviceSecret(secret, "not-a-hash", pepper)).toBe(false);
  });

  it("generate different secrets each time", () => {
    const a = generateDeviceSecret();
    const b = generateDeviceSecret();
    expect(a.secret).not.toBe(b.secret);
    expect(a.keyId).not.toBe(b.keyId);
  });
});
