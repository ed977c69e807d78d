/**
 * Ingest: one MQTT message in, validated samples out (docs/architecture.md §5). Each sample is judged
 * alone; every rejection is counted per device and reason; nothing here throws, and nothing
 * rejected reaches the sink (the tracker registry, history and realtime). An accepted sample
 * whose values are a fault code or out of the loop's range (or that the gateway marks so) goes on
 * with `quality` bad or uncertain and its reason, counted per device and reason: the tracker and
 * history keep it out of every estimate and statistic.
 */
import { judgeSampleQuality, type QualityReason } from "@/lib/domain/sample-quality";
import type { SampleDto } from "@/lib/domain/types";
import {
  FUTURE_SKEW_MS,
  MAX_PAYLOAD_BYTES,
  decodePayload,
  parseTelemetryTopic,
  validateSample,
  type RejectReason,
} from "@/lib/domain/telemetry";
import { IngestCounters, type DeviceIdentity } from "./counters";
import type { LoopDirectory, LoopRoute } from "./directory";

export { IngestCounters, UNAUTHENTICATED, type DeviceIdentity, type DeviceCounters } from "./counters";
export { LoopDirectory, type LoopRoute } from "./directory";

export interface IngestMessage {
  topic: string;
  payload: Uint8Array | string;
  device: DeviceIdentity;
  /** MQTT DUP flag: the sender says this is a re-send of a QoS 1 message. */
  dup?: boolean;
  retain?: boolean;
}

export type IngestSink = (route: LoopRoute, samples: SampleDto[], receivedAt: number) => void;

export interface IngestOutcome {
  accepted: number;
  redelivered: number;
  rejected: Partial<Record<RejectReason, number>>;
  /** Accepted samples (counted in `accepted` too) that are not good, per reason; absent when all were good. */
  quality?: Partial<Record<QualityReason, number>>;
}

/** What identifies the last accepted message of a loop (for QoS 1 re-sends without the DUP flag). */
interface LastMessage {
  firstT: number;
  count: number;
  /** The body itself (held only until the loop's next message; typically a few hundred bytes). */
  payload: Uint8Array | string;
}

export interface IngestOptions {
  directory: LoopDirectory;
  now: () => number;
  sink: IngestSink;
  /** Where historical samples go (history only; absent: they are counted and dropped). */
  historySink?: (route: LoopRoute, samples: SampleDto[]) => void;
  counters?: IngestCounters;
  futureSkewMs?: number;
}

export class Ingest {
  readonly counters: IngestCounters;
  private readonly lastT = new Map<number, number>();
  /** Per loop, the last store-and-forward sample taken (Sparkplug is_historical), apart from live. */
  private readonly lastHistoricalT = new Map<number, number>();
  private readonly lastMessage = new Map<number, LastMessage>();
  private readonly skew: number;

  constructor(private readonly opts: IngestOptions) {
    this.counters = opts.counters ?? new IngestCounters();
    this.skew = opts.futureSkewMs ?? FUTURE_SKEW_MS;
  }

  /** After a restart: the last sample time each loop already took, so replays count as duplicates. */
  seedLastTimes(entries: Iterable<[loopId: number, t: number]>): void {
    for (const [loopId, t] of entries) {
      if (Number.isFinite(t) && t > (this.lastT.get(loopId) ?? -Infinity)) this.lastT.set(loopId, t);
    }
  }

  lastTime(loopId: number): number | null {
    return this.lastT.get(loopId) ?? null;
  }

  /** Take one message. Never throws: a failure in the sink is logged and the message counted. */
  handle(msg: IngestMessage): IngestOutcome {
    const receivedAt = this.opts.now();
    const out: IngestOutcome = { accepted: 0, redelivered: 0, rejected: {} };
    const device = msg.device;
    const counters = this.counters;
    counters.message(device, receivedAt);
    const reject = (reason: RejectReason, n = 1) => {
      counters.reject(device, reason, receivedAt, n);
      out.rejected[reason] = (out.rejected[reason] ?? 0) + n;
    };

    if (msg.retain) {
      reject("retained");
      return out;
    }
    const bytes = typeof msg.payload === "string" ? Buffer.byteLength(msg.payload, "utf8") : msg.payload.byteLength;
    if (bytes > MAX_PAYLOAD_BYTES) {
      reject("too-large");
      return out;
    }
    const topic = parseTelemetryTopic(msg.topic);
    if (!topic) {
      reject("bad-topic");
      return out;
    }
    // A credential publishes only under its own tenant (and site, when bound to one). The embedded
    // broker refuses such publishes before they get here; an external broker may not.
    if (device.tenantSlug !== null && (topic.tenantSlug !== device.tenantSlug || (device.siteSlug !== null && topic.siteSlug !== device.siteSlug))) {
      reject("wrong-tenant");
      return out;
    }
    const route = this.opts.directory.resolve(topic);
    if (!route) {
      reject("unknown-loop");
      return out;
    }
    if (device.tenantId !== null && route.tenantId !== device.tenantId) {
      reject("wrong-tenant");
      return out;
    }

    // Size before parse: an oversized body costs one comparison.
    const decoded = decodePayload(msg.payload);
    if (!decoded.ok) {
      reject(decoded.reason);
      return out;
    }

    const items = decoded.items;
    const prev = this.lastMessage.get(route.loopId);
    // A QoS 1 re-send: the DUP flag, or byte for byte the message taken last.
    const resend = msg.dup === true || (prev !== undefined && prev.count === items.length && firstT(items) === prev.firstT && samePayload(prev.payload, msg.payload));
    const n = this.take(route, device, items, receivedAt, out, resend, false);
    if (n > 0) {
      // A copy: the broker's payload may be a view into a much larger socket buffer.
      const kept = typeof msg.payload === "string" ? msg.payload : Buffer.from(msg.payload);
      this.lastMessage.set(route.loopId, { firstT: firstT(items) ?? NaN, count: items.length, payload: kept });
    }
    return out;
  }

  /**
   * Samples of a loop decoded from another wire format (Sparkplug B, server/sparkplug): the same
   * tenant and site check, per-sample validation, quality judgement, counters and sink as a JSON
   * message. `historical` (store-and-forward after an outage): taken in order among themselves,
   * and written as history only (`historySink`), never as live data.
   */
  takeSamples(route: LoopRoute, device: DeviceIdentity, items: unknown[], opts: { historical?: boolean } = {}): IngestOutcome {
    const receivedAt = this.opts.now();
    const out: IngestOutcome = { accepted: 0, redelivered: 0, rejected: {} };
    if ((device.tenantId !== null && route.tenantId !== device.tenantId) || (device.siteSlug !== null && route.siteSlug !== device.siteSlug)) {
      this.counters.reject(device, "wrong-tenant", receivedAt, items.length);
      out.rejected["wrong-tenant"] = items.length;
      return out;
    }
    this.take(route, device, items, receivedAt, out, false, opts.historical === true);
    return out;
  }

  /** The per-sample checks; returns how many samples went to the sink. */
  private take(route: LoopRoute, device: DeviceIdentity, items: unknown[], receivedAt: number, out: IngestOutcome, resend: boolean, historical: boolean): number {
    const counters = this.counters;
    const reject = (reason: RejectReason) => {
      counters.reject(device, reason, receivedAt, 1);
      out.rejected[reason] = (out.rejected[reason] ?? 0) + 1;
    };
    const lastT = historical ? this.lastHistoricalT : this.lastT;
    let last = lastT.get(route.loopId) ?? -Infinity;
    const maxT = receivedAt + this.skew;
    const accepted: SampleDto[] = [];
    let redelivered = 0;

    for (const item of items) {
      const v = validateSample(item);
      if (!v.ok) {
        reject(v.reason);
        continue;
      }
      const s = v.sample;
      if (s.t > maxT) {
        reject("future");
        continue;
      }
      if (s.t <= last) {
        if (resend) redelivered++;
        else reject(s.t === last ? "duplicate" : "out-of-order");
        continue;
      }
      last = s.t;
      const q = judgeSampleQuality(s, route.range ?? null);
      if (q.reason !== null) {
        s.quality = q.quality;
        s.qualityReason = q.reason;
        counters.quality(device, q.reason, receivedAt);
        const byReason = (out.quality ??= {});
        byReason[q.reason] = (byReason[q.reason] ?? 0) + 1;
      }
      accepted.push(s);
    }

    if (redelivered > 0) {
      counters.redelivery(device, redelivered);
      out.redelivered = redelivered;
    }
    if (accepted.length === 0) return 0;
    lastT.set(route.loopId, last);
    counters.accept(device, accepted.length);
    out.accepted += accepted.length;
    try {
      if (historical) this.opts.historySink?.(route, accepted);
      else this.opts.sink(route, accepted, receivedAt);
    } catch (err) {
      console.error(`[ingest] sink failed for loop ${route.loopId}:`, err);
    }
    return accepted.length;
  }
}

function samePayload(a: Uint8Array | string, b: Uint8Array | string): boolean {
  if (typeof a === "string" || typeof b === "string") return typeof a === typeof b && a === b;
  return a.byteLength === b.byteLength && Buffer.from(a.buffer, a.byteOffset, a.byteLength).equals(b);
}

function firstT(items: unknown[]): number | undefined {
  const first = items[0];
  if (first && typeof first === "object" && "t" in first) {
    const t = (first as { t: unknown }).t;
    return typeof t === "number" ? t : undefined;
  }
  return undefined;
}
