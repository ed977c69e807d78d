/**
 * Device credentials (admin): list, create (the secret is returned once and never stored in
 * clear), revoke. The broker refuses a revoked key within its cache's short TTL.
 */
import "server-only";
import { randomBytes } from "node:crypto";
import { z } from "zod";
import { text } from "@/lib/text-input";
import { getDb } from "@/lib/data/db/sequelize";
import { generateDeviceSecret, hashDeviceSecret } from "@/lib/devices";
import { NotFoundError, ValidationError } from "@/lib/domain/errors";
import { findOwned } from "@/lib/data/tenancy";
import type { TenantContext } from "@/lib/domain/types";
import { inConfigTransaction, logConfigChange } from "./config-log";

export const createDeviceSchema = z
  .object({
    name: text().trim().min(2, "Name the device (at least 2 characters).").max(120),
    siteId: z.number().int().positive().nullable(),
    reason: text().trim().max(500).optional(),
  })
  .strict();

export interface DeviceDto {
  id: number;
  name: string;
  siteId: number | null;
  clientId: string;
  keyId: string;
  createdAt: string;
  revokedAt: string | null;
  lastSeenAt: string | null;
}

const iso = (d: Date | null | undefined) => (d ? new Date(d).toISOString() : null);

export async function listDevices(ctx: TenantContext): Promise<DeviceDto[]> {
  const { DeviceCredential } = getDb().models;
  const rows = await DeviceCredential.findAll({ where: { tenantId: ctx.tenantId }, order: [["id", "DESC"]] });
  return rows.map((r) => ({ id: r.id, name: r.name, siteId: r.siteId, clientId: r.clientId, keyId: r.keyId, createdAt: iso(r.createdAt)!, revokedAt: iso(r.revokedAt), lastSeenAt: iso(r.lastSeenAt) }));
}

/** Create a credential. The returned `secret` exists only in this answer. */
export async function createDevice(ctx: TenantContext, input: z.infer<typeof createDeviceSchema>): Promise<DeviceDto & { secret: string }> {
  const { DeviceCredential, Site } = getDb().models;
  if (input.siteId != null && !(await findOwned(Site, ctx, input.siteId))) throw new ValidationError("siteId: no such site in this tenant.");
  const { keyId, secret } = generateDeviceSecret();
  const clientId = `rg-${ctx.tenantSlug}-${randomBytes(4).toString("hex")}`;
  const row = await inConfigTransaction(async (transaction) => {
    const created = await DeviceCredential.create(
      { tenantId: ctx.tenantId, siteId: input.siteId, name: input.name, clientId, keyId, secretHash: hashDeviceSecret(secret), createdBy: ctx.userId },
      { transaction },
    );
    await logConfigChange(ctx, { entity: "device_credential", entityId: created.id, diff: { name: { from: null, to: input.name }, keyId: { from: null, to: keyId } }, reason: input.reason ?? null }, transaction);
    return created;
  });
  return { id: row.id, name: row.name, siteId: row.siteId, clientId, keyId, createdAt: iso(row.createdAt)!, revokedAt: null, lastSeenAt: null, secret };
}

export async function revokeDevice(ctx: TenantContext, id: number, reason: string): Promise<DeviceDto> {
  const { DeviceCredential } = getDb().models;
  const row = await findOwned(DeviceCredential, ctx, id);
  if (!row) throw new NotFoundError("Device credential");
  if (!row.revokedAt) {
    const at = new Date();
    await inConfigTransaction(async (transaction) => {
      await row.update({ revokedAt: at }, { transaction });
      await logConfigChange(ctx, { entity: "device_credential", entityId: id, diff: { revokedAt: { from: null, to: at.toISOString() } }, reason }, transaction);
    });
  }
  return { id: row.id, name: row.name, siteId: row.siteId, clientId: row.clientId, keyId: row.keyId, createdAt: iso(row.createdAt)!, revokedAt: iso(row.revokedAt), lastSeenAt: iso(row.lastSeenAt) };
}
