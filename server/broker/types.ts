/**
 * What the MQTT boundary offers the rest of the server, whichever broker is behind it (embedded
 * aedes or an external broker): one in-process dispatch of every message with the identity of the
 * device that sent it (docs/architecture.md §1, §5, §9).
 */
import type { Aedes } from "aedes";
import type { RejectReason } from "@/lib/domain/telemetry";
import type { Service } from "@/server/context";
import type { DeviceIdentity, IngestCounters } from "@/server/ingest/counters";
import type { CredentialLookup, DeviceCredential } from "./credentials";
import type { TlsListenerOptions } from "./tls";

export interface BrokerMessage {
  topic: string;
  payload: Buffer;
  device: DeviceIdentity;
  dup: boolean;
  retain: boolean;
}
export type BrokerMessageHandler = (msg: BrokerMessage) => void;

export const EXTERNAL_BROKER: DeviceIdentity = { key: "(external broker)", tenantId: null, tenantSlug: null, siteSlug: null };
export const INTERNAL_PUBLISHER: DeviceIdentity = { key: "(internal)", tenantId: null, tenantSlug: null, siteSlug: null };

/**
 * A namespace besides the JSON telemetry topic that devices may publish to (Sparkplug B). `owns`
 * says whether a topic is this namespace's; `authorize` then returns null when the credential may
 * publish there, else the reason it may not.
 */
export interface TopicNamespace {
  owns(topic: string): boolean;
  authorize(topic: string, cred: DeviceCredential): { reason: RejectReason; why: string } | null;
  /** Whether the namespace accepts retained publishes (Sparkplug's STATE is retained; births are not). */
  allowsRetained?(topic: string): boolean;
}

export interface BrokerOptions {
  /** Where credentials come from (the pipeline passes the database lookup). */
  credentials: CredentialLookup;
  /** Counters shared with ingest, so refusals at the broker are counted per device too. */
  counters?: IngestCounters;
  host?: string;
  /** 0 = any free port (tests). */
  port?: number;
  /** External broker URL; overrides the embedded broker (default: config MQTT_URL). */
  mqttUrl?: string | null;
  credentialTtlMs?: number;
  /** CONNECT attempts allowed per source address per window. */
  perIp?: { points: number; durationS: number };
  /**
   * Failed CONNECTs (wrong secret, unknown key, client id not bound) allowed per source address
   * and key id together per window; past it, that address may not try that key id until the
   * window ends. Counted only after the secret was checked, so the right secret from another
   * address (the real gateway) is never locked out by a stranger's guesses.
   */
  perKey?: { points: number; durationS: number };
  /** How often connected devices are re-checked for revocation (ms). */
  revocationSweepMs?: number;
  /** mqtts listener (server/broker/tls.ts); default from the configuration, null = none. */
  tls?: TlsListenerOptions | null;
  /** Namespaces besides the JSON telemetry topic (Sparkplug B), with their publish rules. */
  namespaces?: TopicNamespace[];
}

export interface BrokerService extends Service {
  /** The embedded broker, or null when an external broker is used. */
  readonly broker: Aedes | null;
  address(): { host: string; port: number } | null;
  /** The mqtts listener's address, when TLS is on. */
  tlsAddress?(): { host: string; port: number } | null;
  publishInternal(topic: string, payload: Buffer | string): Promise<void>;
  subscribeInternal(pattern: string, handler: BrokerMessageHandler): () => void;
}
