/** Device credentials from MariaDB (device_credentials joined to its tenant and site). */
import { QueryTypes, type Sequelize } from "sequelize";

export interface DeviceCredential {
  keyId: string;
  tenantId: number;
  tenantSlug: string;
  /** The site the credential may publish for; null = every site of its tenant. */
  siteId: number | null;
  siteSlug: string | null;
  /** The MQTT client id bound to the credential (see clientIdAllowed). */
  clientId: string;
  /** HMAC-SHA256(pepper, secret). */
  secretHash: Buffer;
  revoked: boolean;
}

export interface CredentialLookup {
  /** The credential with this key id, or null when there is none. */
  find(keyId: string): Promise<DeviceCredential | null>;
  /** Record that the device was seen (connected or published) at `at` (epoch ms); optional. */
  touch?(keyId: string, at: number): Promise<void>;
}

interface Row {
  keyId: string;
  clientId: string;
  secretHash: string;
  revokedAt: Date | string | null;
  tenantId: number;
  tenantSlug: string;
  siteId: number | null;
  siteSlug: string | null;
}

export function dbCredentials(sequelize: Sequelize): CredentialLookup {
  return {
    async find(keyId: string): Promise<DeviceCredential | null> {
      if (keyId.length === 0 || keyId.length > 64) return null;
      const rows = await sequelize.query<Row>(
        `SELECT d.key_id AS keyId, d.client_id AS clientId, d.secret_hash AS secretHash, d.revoked_at AS revokedAt,
                d.tenant_id AS tenantId, t.slug AS tenantSlug, d.site_id AS siteId, s.slug AS siteSlug
           FROM device_credentials d
           JOIN tenants t ON t.id = d.tenant_id
           LEFT JOIN sites s ON s.id = d.site_id AND s.tenant_id = d.tenant_id
          WHERE d.key_id = ?
          LIMIT 1`,
        { replacements: [keyId], type: QueryTypes.SELECT },
      );
      const r = rows[0];
      if (!r) return null;
      // A site id that does not resolve to a site of the same tenant must not widen the credential.
      const siteBroken = r.siteId !== null && r.siteSlug === null;
      return {
        keyId: r.keyId,
        clientId: r.clientId,
        secretHash: /^[0-9a-f]{64}$/i.test(r.secretHash) ? Buffer.from(r.secretHash, "hex") : Buffer.alloc(0),
        revoked: r.revokedAt !== null || siteBroken,
        tenantId: Number(r.tenantId),
        tenantSlug: r.tenantSlug,
        siteId: r.siteId === null ? null : Number(r.siteId),
        siteSlug: r.siteSlug,
      };
    },
    async touch(keyId: string, at: number): Promise<void> {
      await sequelize.query("UPDATE device_credentials SET last_seen_at = ? WHERE key_id = ?", { replacements: [new Date(at), keyId] });
    },
  };
}
