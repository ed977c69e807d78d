/**
 * Shared types of the product (plain objects that cross lib/ -> routes -> browser).
 * IDs are database integers. Times are epoch milliseconds inside the server and Socket.IO
 * payloads, ISO 8601 strings in the REST API.
 */
import type { Complex } from "@/lib/control/types";
import type { QualityReason } from "./sample-quality";
import type { LoopAssessment } from "./assessment";
import type { RoutineBrief } from "./findings";

export const ROLES = ["viewer", "operator", "engineer", "admin"] as const;
export type Role = (typeof ROLES)[number];

/** True when `role` includes every right of `min` (viewer < operator < engineer < admin). */
export function roleAtLeast(role: Role, min: Role): boolean {
  return ROLES.indexOf(role) >= ROLES.indexOf(min);
}

export const LOOP_KINDS = ["flow", "level", "temperature", "pressure", "composition", "other"] as const;
export type LoopKind = (typeof LOOP_KINDS)[number];

export const TRACKER_STATES = [
  "learning",
  "tracking",
  "low-excitation",
  "stale",
  "manual",
  "saturated",
  "poor-fit",
] as const;
export type TrackerState = (typeof TRACKER_STATES)[number];

export type LoopMode = "auto" | "manual" | "cascade";

/** Quality of a sample (telemetry contract): only `good` samples feed estimators and statistics (lib/domain/sample-quality.ts). */
export const SAMPLE_QUALITIES = ["good", "bad", "uncertain"] as const;
export type SampleQuality = (typeof SAMPLE_QUALITIES)[number];

export const ALARM_PRIORITIES = ["urgent", "high", "low"] as const;
export type AlarmPriority = (typeof ALARM_PRIORITIES)[number];

/** Operator alarm conditions: each calls for an operator's response (ISA-18.2). */
export const ALARM_CONDITIONS = ["unstable", "margin", "rim-forecast"] as const;
export type AlarmCondition = (typeof ALARM_CONDITIONS)[number];
/**
 * Conditions that were operator alarms once and are kept only so alarm history stays readable
 * (the database enums keep them; no new alarm of them is raised). `sluggish` moved to the
 * engineering work list as the sluggish-tuning finding (lib/assessment/model-check.ts, migration 0104).
 */
export const RETIRED_ALARM_CONDITIONS = ["sluggish"] as const;
/** Every condition a stored alarm row may carry (history included). */
export const STORED_ALARM_CONDITIONS = [...ALARM_CONDITIONS, ...RETIRED_ALARM_CONDITIONS] as const;
export type StoredAlarmCondition = (typeof STORED_ALARM_CONDITIONS)[number];

/** ANSI/ISA-18.2 / IEC 62682 alarm states. */
export const ALARM_STATES = [
  "normal",
  "unacknowledged",
  "acknowledged",
  "rtn-unacknowledged",
  "shelved",
  "suppressed-by-design",
  "out-of-service",
] as const;
export type AlarmState = (typeof ALARM_STATES)[number];

/** One telemetry sample as it reaches the browser (after validation). */
export interface SampleDto {
  t: number;
  sp: number;
  pv: number;
  mv: number;
  mode: LoopMode;
  /** Absent = good. Set by the gateway, or by ingest when a value is a fault code or out of range. */
  quality?: SampleQuality;
  /** Why a sample is not good (set by ingest and the tracker, never taken from the gateway). */
  qualityReason?: QualityReason;
}

/**
 * What a loop's tracker saw of sample quality: counts over its last `windowSamples` samples, totals
 * since it started, the last bad sample. Bad and uncertain samples never reach the estimators;
 * `outliers` are in-range PV readings the residual test bounded (isolated outliers).
 */
export interface SampleQualityDto {
  windowSamples: number;
  bad: number;
  uncertain: number;
  outliers: number;
  /** bad / windowSamples (0 when the window is empty). */
  badShare: number;
  badTotal: number;
  uncertainTotal: number;
  /** Epoch ms (sample time) of the last bad sample, and why it was bad. */
  lastBadAt: number | null;
  lastBadReason: QualityReason | null;
}

/** A pole with its uncertainty: radius standard deviation and (Re, Im) covariance [xx, xy, yy]. */
export interface PoleDto extends Complex {
  radius: number;
  sdRadius: number | null;
  cov: [number, number, number] | null;
  /**
   * Conditioning bound of the root (z-plane distance): a rounding error in the polynomial's
   * coefficients can move it this far (lib/control/root-bounds.ts); null or absent when unknown.
   */
  bound?: number | null;
}

/**
 * What a loop tracker knows about its loop at one moment: its assessment (the figures, defined
 * once in lib/domain/assessment.ts) and the estimates they come from.
 */
export interface LoopStateDto extends LoopAssessment {
  loopId: number;
  tenantId: number;
  /** Epoch ms when the last sample was received (data age = now - receivedAt). */
  receivedAt: number | null;
  samples: number;
  excitation: number | null;
  fitPercent: number | null;
  /** Closed-loop poles from the estimated plant + the configured controller. */
  modelPoles: PoleDto[];
  /** Closed-loop poles from data alone (SP -> PV), or disturbance-response poles. */
  dataPoles: PoleDto[];
  dataPolesKind: "closed-loop" | "disturbance-response";
  /** Closed-loop zeros (model-based), for the z-plane map. */
  zeros: Complex[];
  characteristic: number[] | null;
  delaySamples: number | null;
  last: SampleDto | null;
}

export interface AlarmDto {
  id: number;
  tenantId: number;
  loopId: number;
  loopTag: string;
  condition: AlarmCondition;
  priority: AlarmPriority;
  state: AlarmState;
  /** Is the condition active right now (independent of acknowledgement)? */
  active: boolean;
  shelvedUntil: string | null;
  suppressedReason: string | null;
  message: string;
  value: number | null;
  level: number | null;
  activatedAt: string | null;
  changedAt: string;
}

/** A pole as a live summary carries it: its place and radius, rounded, without uncertainty. */
export interface PoleBrief extends Complex {
  radius: number;
}

/**
 * The live summary of one loop in a `loop:state` batch (docs/architecture.md §8): what the control
 * room, the wall, tiles, area summaries, the loop list and the worst-first order show. The same
 * field names and meanings as LoopStateDto, rounded (server/realtime/summary.ts), without what
 * only the loop detail shows (covariances, zeros, polynomial, forecast, fit, last sample). A
 * LoopStateDto can stand wherever a LoopStateBrief is expected; the full state of a loop comes
 * from `GET /api/loops/[id]` and, while the loop is watched, from `loop:detail`.
 */
export type LoopStateBrief = Pick<
  LoopStateDto,
  | "loopId"
  | "tenantId"
  | "at"
  | "receivedAt"
  | "trackerState"
  | "stateReason"
  | "estimationPeriodS"
  | "spectralRadius"
  | "rimDistance"
  | "decayRatio"
  | "juryStable"
  | "dominant"
  | "gainHeadroom"
  | "dataPolesKind"
  | "polesFrom"
  | "oscillation"
> & {
  modelPoles: PoleBrief[];
  dataPoles: PoleBrief[];
  /** The routine-data verdict (label, confidence, time still needed), when the live assessor has run. */
  routine?: RoutineBrief | null;
};

/** A loop of the live loop list in the browser: the API's summary with a live state summary. */
export type LiveLoopSummary = Omit<LoopSummary, "state"> & { state: LoopStateBrief | null };

export interface LoopSummary {
  id: number;
  tenantId: number;
  siteId: number;
  siteName: string;
  area: string | null;
  tag: string;
  slug: string;
  description: string;
  kind: LoopKind;
  units: string;
  pvLo: number;
  pvHi: number;
  estimationPeriodS: number;
  state: LoopStateDto | null;
  alarms: Pick<AlarmDto, "id" | "condition" | "priority" | "state">[];
}

/** The signed-in user in the context of the tenant they are working in. */
export interface TenantContext {
  userId: number;
  email: string;
  name: string;
  tenantId: number;
  tenantSlug: string;
  tenantName: string;
  role: Role;
  /**
   * Set only while the database is unreachable: the role comes from the last successful read of
   * the membership, made at this time (epoch ms); actions taken so are journaled as such.
   */
  membershipAsOf?: number;
  /**
   * The sites this membership may see; null or absent = every site of the tenant. A client's
   * staff invited into a contractor's tenant are scoped to their own site (membership_sites).
   */
  siteIds?: number[] | null;
}
