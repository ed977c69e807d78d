/**
 * The services of the running server as the rest of the product sees them: health, and the
 * operations route handlers call on the alarm and mail services. Interfaces only; the custom
 * server implements them (server/), route handlers reach them through lib/data/server-context.ts.
 */
import type { AlarmKpis } from "./alarms/kpis";
import type {
  EffectivePolicy,
  LevelEquivalent,
  PolicyOverride,
  PolicyScope,
} from "./alarms/policy";
import type { QualityReason } from "./sample-quality";
import type { RejectReason } from "./telemetry";
import type { AlarmDto, AlarmPriority, AlarmState, LoopStateDto, TenantContext } from "./types";
import type { BackfillApi } from "./backfill";

export type HealthLevel = "ok" | "degraded" | "critical" | "down";

export interface ServiceHealth {
  status: HealthLevel;
  detail?: Record<string, unknown>;
}

export interface Service {
  readonly name: string;
  health(): ServiceHealth | Promise<ServiceHealth>;
  stop(): Promise<void>;
}

export interface OutboxMessage {
  id: number;
  messageId: string | null;
  from: string;
  to: string[];
  subject: string;
  text: string;
  headers: Record<string, string>;
  /** Epoch ms. */
  receivedAt: number;
  /** The tenant that sent it through this process; null for anything else the sink received. */
  tenantId: number | null;
  /** File names of the message's attachments. */
  attachments: string[];
}

export interface MailMessage {
  to: string[];
  subject: string;
  text: string;
  headers?: Record<string, string>;
  /** Text never shown in the admin outbox (e.g. a one-time link). */
  withhold?: string[];
  /** Files attached (e.g. a report's PDF; Node's Buffer is a Uint8Array). */
  attachments?: { filename: string; content: Uint8Array; contentType: string }[];
}

/** What the mail service offers the rest of the product. */
export interface MailApi {
  send(msg: MailMessage): Promise<{ messageId: string }>;
  /** Messages received by the sink (newest last); empty when a real SMTP server is used. */
  outbox(): OutboxMessage[];
  /** One tenant's sink messages for its admins, with withheld parts blanked (newest last). */
  outboxFor(tenantId: number): OutboxMessage[];
  clearOutbox(): void;
  /** Resolves when the sink holds at least `n` messages (tests); rejects after `timeoutMs`. */
  waitForMessages(n: number, timeoutMs?: number): Promise<OutboxMessage[]>;
  readonly sinkPort: number | null;
}

export interface AlarmEventDto {
  id: number | null;
  journalId: string;
  at: string;
  kind: string;
  fromState: string | null;
  toState: string | null;
  userId: number | null;
  userName: string | null;
  userEmail: string | null;
  comment: string | null;
  data: unknown;
  /** Journalled, not yet in the database. */
  pending: boolean;
}

export interface AlarmOccurrenceDto {
  id: number;
  priority: string;
  startedAt: string;
  endedAt: string | null;
  acknowledgedAt: string | null;
}

export interface LoopPolicyView {
  loopId: number;
  tag: string;
  estimationPeriodS: number;
  effective: EffectivePolicy;
  /** Oscillation period of the loop's current dominant oscillating mode (null: none now). */
  oscillationPeriodS: number | null;
  equivalents: LevelEquivalent[];
}

export interface PolicyView {
  scope: PolicyScope;
  id: number;
  /** What this scope sets (null: it inherits everything). */
  settings: PolicyOverride | null;
  updatedAt: string | null;
  /** Effective at this scope (for a site or tenant: before any loop override). */
  effective: EffectivePolicy;
  loops: LoopPolicyView[];
}

export interface AlarmListFilter {
  state?: AlarmState;
  priority?: AlarmPriority;
  loopId?: number;
  /** Epoch ms: changed at or after. */
  from?: number;
  /** Epoch ms: changed before. */
  to?: number;
}

/** What the alarm service offers route handlers. */
export interface AlarmApi {
  list(tenantId: number, f?: AlarmListFilter): AlarmDto[];
  get(tenantId: number, alarmId: number): AlarmDto | null;
  detail(
    tenantId: number,
    alarmId: number,
  ): Promise<{ alarm: AlarmDto; occurrences: AlarmOccurrenceDto[]; events: AlarmEventDto[] }>;
  acknowledge(user: TenantContext, alarmId: number, comment: string | null): AlarmDto;
  shelve(user: TenantContext, alarmId: number, minutes: number, reason: string): AlarmDto;
  unshelve(user: TenantContext, alarmId: number, comment?: string | null): AlarmDto;
  removeFromService(user: TenantContext, alarmId: number, reason: string): AlarmDto;
  returnToService(user: TenantContext, alarmId: number, comment?: string | null): AlarmDto;
  kpis(tenantId: number, from: number, to: number, areaId: number | null): Promise<AlarmKpis>;
  getPolicy(user: TenantContext, scope: PolicyScope, id: number): Promise<PolicyView>;
  putPolicy(
    user: TenantContext,
    scope: PolicyScope,
    id: number,
    settings: unknown,
    reason: string,
    mocReference: string | null,
  ): Promise<PolicyView>;
  /** The loop's effective policy (the tracker forecasts to its decay-ratio level). */
  policyFor(loopId: number): EffectivePolicy;
}

/** Ingest counters of one device, live from the running pipeline. */
export interface IngestDeviceCounters {
  device: string;
  tenantId: number | null;
  messages: number;
  acceptedSamples: number;
  redelivered: number;
  rejected: Record<RejectReason, number>;
  lastMessageAt: number | null;
  lastRejectAt: number | null;
  lastRejectReason: RejectReason | null;
  quality?: Record<QualityReason, number>;
  lastBadAt?: number | null;
  lastBadReason?: QualityReason | null;
}

/** What the pipeline offers route handlers: a loop's live state, the ingest counters. */
export interface PipelineApi {
  loopState(loopId: number): LoopStateDto | null;
  backfill: BackfillApi;
  ingestDiagnostics(tenantId: number): { devices: IngestDeviceCounters[] };
  /** Re-read Sparkplug group owners and metric mappings after an admin's change. */
  reloadSparkplug(): Promise<void>;
}

/** Object storage of uploaded files (s3rver on loopback, or S3). */
export interface ObjectStoreApi {
  put(key: string, body: Uint8Array, contentType: string): Promise<void>;
  /** The object's bytes, or null when it has no body. Throws when the key does not exist. */
  get(key: string): Promise<Buffer | null>;
  delete(key: string): Promise<void>;
}
