/**
 * Ingest diagnostics for an admin: the running pipeline's counters for the admin's tenant only,
 * joined with the tenant's device names. Devices that sent nothing since the start are listed
 * with zero counts so a silent gateway is visible. Samples accepted as bad or uncertain quality
 * (lib/domain/sample-quality.ts) are counted per reason beside the rejections.
 */
import "server-only";
import { QueryTypes, type Sequelize } from "sequelize";
import { getSequelize } from "@/lib/data/db/sequelize";
import { QUALITY_REASONS, type QualityReason } from "@/lib/domain/sample-quality";
import type { PipelineApi } from "@/lib/domain/services";
import { runningService } from "@/lib/data/server-context";
import { REJECT_REASONS, type RejectReason } from "@/lib/domain/telemetry";
import type { TenantContext } from "@/lib/domain/types";

export interface DeviceIngestCounters {
  device: string;
  name: string | null;
  revoked: boolean;
  messages: number;
  acceptedSamples: number;
  redelivered: number;
  rejected: Record<RejectReason, number>;
  lastMessageAt: string | null;
  lastRejectAt: string | null;
  lastRejectReason: RejectReason | null;
  /** Accepted samples of bad or uncertain quality, per reason. */
  quality: Record<QualityReason, number>;
  lastBadAt: string | null;
  lastBadReason: QualityReason | null;
}

export interface IngestDiagnosticsDto {
  /** False when no pipeline runs in this process (counters then read zero). */
  running: boolean;
  reasons: readonly RejectReason[];
  qualityReasons: readonly QualityReason[];
  devices: DeviceIngestCounters[];
  totals: { messages: number; acceptedSamples: number; redelivered: number; rejected: Record<RejectReason, number>; quality: Record<QualityReason, number> };
}


type PipelineLike = Partial<Pick<PipelineApi, "ingestDiagnostics">>;

const zero = () => Object.fromEntries(REJECT_REASONS.map((r) => [r, 0])) as Record<RejectReason, number>;
const zeroQuality = () => Object.fromEntries(QUALITY_REASONS.map((r) => [r, 0])) as Record<QualityReason, number>;
const iso = (t: number | null) => (t === null ? null : new Date(t).toISOString());

export async function ingestDiagnostics(
  ctx: Pick<TenantContext, "tenantId">,
  deps: { sequelize?: Sequelize; pipeline?: PipelineLike | null } = {},
): Promise<IngestDiagnosticsDto> {
  const sequelize = deps.sequelize ?? getSequelize();
  const pipeline = deps.pipeline !== undefined ? deps.pipeline : runningService("pipeline");
  const live = typeof pipeline?.ingestDiagnostics === "function" ? pipeline.ingestDiagnostics(ctx.tenantId).devices.filter((d) => d.tenantId === ctx.tenantId) : null;
  const rows = await sequelize.query<{ key_id: string; name: string; revoked_at: unknown }>(
    "SELECT key_id, name, revoked_at FROM device_credentials WHERE tenant_id = ? ORDER BY name",
    { replacements: [ctx.tenantId], type: QueryTypes.SELECT },
  );
  const byKey = new Map((live ?? []).map((d) => [d.device, d]));
  const devices: DeviceIngestCounters[] = rows.map((r) => {
    const d = byKey.get(r.key_id);
    byKey.delete(r.key_id);
    return {
      device: r.key_id,
      name: r.name,
      revoked: r.revoked_at !== null,
      messages: d?.messages ?? 0,
      acceptedSamples: d?.acceptedSamples ?? 0,
      redelivered: d?.redelivered ?? 0,
      rejected: d ? { ...zero(), ...d.rejected } : zero(),
      lastMessageAt: iso(d?.lastMessageAt ?? null),
      lastRejectAt: iso(d?.lastRejectAt ?? null),
      lastRejectReason: d?.lastRejectReason ?? null,
      quality: { ...zeroQuality(), ...d?.quality },
      lastBadAt: iso(d?.lastBadAt ?? null),
      lastBadReason: d?.lastBadReason ?? null,
    };
  });
  // Counters of a credential deleted since (still this tenant's traffic).
  for (const d of byKey.values()) {
    devices.push({ device: d.device, name: null, revoked: true, messages: d.messages, acceptedSamples: d.acceptedSamples, redelivered: d.redelivered, rejected: { ...zero(), ...d.rejected }, lastMessageAt: iso(d.lastMessageAt), lastRejectAt: iso(d.lastRejectAt), lastRejectReason: d.lastRejectReason, quality: { ...zeroQuality(), ...d.quality }, lastBadAt: iso(d.lastBadAt ?? null), lastBadReason: d.lastBadReason ?? null });
  }
  const totals = { messages: 0, acceptedSamples: 0, redelivered: 0, rejected: zero(), quality: zeroQuality() };
  for (const d of devices) {
    totals.messages += d.messages;
    totals.acceptedSamples += d.acceptedSamples;
    totals.redelivered += d.redelivered;
    for (const r of REJECT_REASONS) totals.rejected[r] += d.rejected[r];
    for (const r of QUALITY_REASONS) totals.quality[r] += d.quality[r];
  }
  return { running: live !== null, reasons: REJECT_REASONS, qualityReasons: QUALITY_REASONS, devices, totals };
}
