/**
 * Ingest counters per device and reason (docs/architecture.md §5). Message-level reasons (bad-json,
 * too-large, too-many-samples, bad-topic, retained, unauthorised, unknown-loop, wrong-tenant) count
 * messages; sample-level reasons (bad-shape, non-finite, out-of-order, duplicate, future) and
 * `redelivery` count samples. Samples accepted as bad or uncertain quality (lib/domain/sample-quality.ts)
 * are counted in `acceptedSamples` and again per quality reason. Served to admins at
 * GET /api/diagnostics/ingest.
 */
import type { IngestDeviceCounters } from "@/lib/domain/services";
import { QUALITY_REASONS, type QualityReason } from "@/lib/domain/sample-quality";
import { REJECT_REASONS, type RejectReason } from "@/lib/domain/telemetry";

/** Who sent a message: the authenticated credential, or a bucket for traffic without one. */
export interface DeviceIdentity {
  /** Credential key id (the MQTT username); "(unauthenticated)" or "(external broker)" otherwise. */
  key: string;
  tenantId: number | null;
  tenantSlug: string | null;
  /** The site the credential is bound to; null = every site of the tenant. */
  siteSlug: string | null;
}

export const UNAUTHENTICATED: DeviceIdentity = { key: "(unauthenticated)", tenantId: null, tenantSlug: null, siteSlug: null };

/** A device's counters as the pipeline keeps them: the live DTO with the quality fields always set. */
export type DeviceCounters = Required<IngestDeviceCounters>;

export function emptyQualityReasons(): Record<QualityReason, number> {
  return Object.fromEntries(QUALITY_REASONS.map((r) => [r, 0])) as Record<QualityReason, number>;
}

function emptyReasons(): Record<RejectReason, number> {
  return Object.fromEntries(REJECT_REASONS.map((r) => [r, 0])) as Record<RejectReason, number>;
}

export class IngestCounters {
  private readonly byDevice = new Map<string, DeviceCounters>();

  private entry(device: DeviceIdentity): DeviceCounters {
    let e = this.byDevice.get(device.key);
    if (!e) {
      e = {
        device: device.key,
        tenantId: device.tenantId,
        messages: 0,
        acceptedSamples: 0,
        redelivered: 0,
        rejected: emptyReasons(),
        lastMessageAt: null,
        lastRejectAt: null,
        lastRejectReason: null,
        quality: emptyQualityReasons(),
        lastBadAt: null,
        lastBadReason: null,
      };
      this.byDevice.set(device.key, e);
    }
    return e;
  }

  message(device: DeviceIdentity, now: number): void {
    const e = this.entry(device);
    e.messages++;
    e.lastMessageAt = now;
  }

  accept(device: DeviceIdentity, samples: number): void {
    this.entry(device).acceptedSamples += samples;
  }

  redelivery(device: DeviceIdentity, samples: number): void {
    this.entry(device).redelivered += samples;
  }

  reject(device: DeviceIdentity, reason: RejectReason, now: number, n = 1): void {
    const e = this.entry(device);
    e.rejected[reason] += n;
    e.lastRejectAt = now;
    e.lastRejectReason = reason;
  }

  /** A sample accepted as bad or uncertain quality. */
  quality(device: DeviceIdentity, reason: QualityReason, now: number): void {
    const e = this.entry(device);
    e.quality[reason]++;
    e.lastBadAt = now;
    e.lastBadReason = reason;
  }

  /** Copies of the counters; with a tenant id, only that tenant's devices. */
  snapshot(tenantId?: number): DeviceCounters[] {
    const out: DeviceCounters[] = [];
    for (const e of this.byDevice.values()) {
      if (tenantId !== undefined && e.tenantId !== tenantId) continue;
      out.push({ ...e, rejected: { ...e.rejected }, quality: { ...e.quality } });
    }
    return out.sort((a, b) => a.device.localeCompare(b.device));
  }

  /** Sums over all devices (or one tenant's). */
  totals(tenantId?: number): { messages: number; acceptedSamples: number; redelivered: number; rejected: Record<RejectReason, number>; quality: Record<QualityReason, number> } {
    const rejected = emptyReasons();
    const quality = emptyQualityReasons();
    let messages = 0;
    let acceptedSamples = 0;
    let redelivered = 0;
    for (const e of this.byDevice.values()) {
      if (tenantId !== undefined && e.tenantId !== tenantId) continue;
      messages += e.messages;
      acceptedSamples += e.acceptedSamples;
      redelivered += e.redelivered;
      for (const r of REJECT_REASONS) rejected[r] += e.rejected[r];
      for (const r of QUALITY_REASONS) quality[r] += e.quality[r];
    }
    return { messages, acceptedSamples, redelivered, rejected, quality };
  }
}
