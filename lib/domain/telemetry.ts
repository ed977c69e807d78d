/**
 * The telemetry contract (docs/architecture.md §5) as code, shared by the ingest service, the
 * simulators and the tests. Hand-written rather than zod: it runs once per received sample on the
 * hot path, and every failure must map to one counted reason instead of an exception.
 *
 * Topic   rg/<tenantSlug>/<siteSlug>/<loopSlug>/samples
 * Payload one sample or an array of 1..500 samples, at most 64 KiB of UTF-8 JSON:
 *         { "t": <epoch ms, integer>, "sp": number, "pv": number, "mv": number,
 *           "mode": "auto" | "manual" | "cascade", "quality"?: "good" | "bad" | "uncertain" }
 *         A sample without `quality` is good unless its values say otherwise: ingest judges every
 *         accepted sample against its loop's range and known fault values (lib/domain/sample-quality.ts).
 */
import { SAMPLE_QUALITIES, type LoopMode, type SampleDto, type SampleQuality } from "./types";
import { isSlug } from "./slug";

export const MAX_PAYLOAD_BYTES = 64 * 1024;
export const MAX_SAMPLES_PER_MESSAGE = 500;
/** How far ahead of the receive time a sample's clock may run (device clock skew allowance). */
export const FUTURE_SKEW_MS = 5_000;
export const LOOP_MODES: readonly LoopMode[] = ["auto", "manual", "cascade"];

/** Why a message or a sample was not used. Counted per device and reason, never thrown. */
export const REJECT_REASONS = [
  "bad-topic",
  "bad-json",
  "bad-shape",
  "non-finite",
  "unknown-loop",
  "wrong-tenant",
  "out-of-order",
  "duplicate",
  "future",
  "too-large",
  "too-many-samples",
  "retained",
  "unauthorised",
  // Sparkplug B (server/sparkplug): a payload the codec cannot read or too many metrics (messages);
  // a sequence gap, data before a birth, an NDEATH of an old session, a birth refused (messages);
  // an unknown alias, a value that does not fit its datatype (metrics); data of a device no loop is
  // mapped to or of a group id no tenant owns (messages)
  "sp-bad-payload",
  "sp-too-many-metrics",
  "sp-seq-gap",
  "sp-no-birth",
  "sp-stale-death",
  "sp-bad-birth",
  "sp-unknown-alias",
  "sp-bad-metric",
  "sp-unmapped",
  "sp-unbound-group",
] as const;
export type RejectReason = (typeof REJECT_REASONS)[number];

/** Not a rejection: a QoS 1 re-send of a message already taken (MQTT 3.1.1 §4.3.2, DUP flag). */
export const REDELIVERY = "redelivery" as const;

export interface TelemetryTopic {
  tenantSlug: string;
  siteSlug: string;
  loopSlug: string;
}

export function telemetryTopic(t: TelemetryTopic): string {
  return `rg/${t.tenantSlug}/${t.siteSlug}/${t.loopSlug}/samples`;
}

/** The wildcard subscription that covers every loop of every tenant. */
export const TELEMETRY_WILDCARD = "rg/+/+/+/samples";

/** Parse a topic of the §5 shape; null for anything else (wrong depth, non-slug segment). */
export function parseTelemetryTopic(topic: string): TelemetryTopic | null {
  const parts = topic.split("/");
  if (parts.length !== 5 || parts[0] !== "rg" || parts[4] !== "samples") return null;
  const [, tenantSlug, siteSlug, loopSlug] = parts as [string, string, string, string, string];
  if (!isSlug(tenantSlug) || !isSlug(siteSlug) || !isSlug(loopSlug)) return null;
  return { tenantSlug, siteSlug, loopSlug };
}

export type PayloadResult =
  | { ok: true; items: unknown[] }
  | { ok: false; reason: "too-large" | "bad-json" | "bad-shape" | "too-many-samples" };

/**
 * Decode a message body into candidate samples. The size limit is checked before any parsing,
 * so an oversized body costs one length comparison. Never throws.
 */
export function decodePayload(payload: Uint8Array | string): PayloadResult {
  const bytes = typeof payload === "string" ? Buffer.byteLength(payload, "utf8") : payload.byteLength;
  if (bytes > MAX_PAYLOAD_BYTES) return { ok: false, reason: "too-large" };
  if (bytes === 0) return { ok: false, reason: "bad-json" };
  let parsed: unknown;
  try {
    const text = typeof payload === "string" ? payload : Buffer.from(payload.buffer, payload.byteOffset, payload.byteLength).toString("utf8");
    parsed = JSON.parse(text);
  } catch {
    // SyntaxError, or RangeError on pathological nesting: both are "not JSON we can use".
    return { ok: false, reason: "bad-json" };
  }
  if (Array.isArray(parsed)) {
    if (parsed.length === 0) return { ok: false, reason: "bad-shape" };
    if (parsed.length > MAX_SAMPLES_PER_MESSAGE) return { ok: false, reason: "too-many-samples" };
    return { ok: true, items: parsed };
  }
  if (parsed !== null && typeof parsed === "object") return { ok: true, items: [parsed] };
  return { ok: false, reason: "bad-shape" };
}

export type SampleResult = { ok: true; sample: SampleDto } | { ok: false; reason: "bad-shape" | "non-finite" };

/** JSON has no NaN or Infinity: encoders write null (JSON.stringify) or a string; 1e999 parses to Infinity. */
function isNonFiniteMarker(v: unknown): boolean {
  if (typeof v === "number") return !Number.isFinite(v);
  if (v === null) return true;
  if (typeof v === "string") return /^[+-]?(nan|inf|infinity)$/i.test(v.trim());
  return false;
}

/**
 * Judge one sample alone (§5). `t` must be a non-negative safe integer (epoch ms); sp, pv, mv
 * finite numbers; mode one of LOOP_MODES; `quality`, when present, one of SAMPLE_QUALITIES.
 * Extra fields are ignored (forward compatibility). A missing or mistyped field is `bad-shape`;
 * NaN/Infinity/null in a numeric field is `non-finite`. A valid sample's quality is judged apart
 * (`judgeSampleQuality`): a bad value is accepted as bad quality, not rejected.
 */
export function validateSample(item: unknown): SampleResult {
  if (item === null || typeof item !== "object" || Array.isArray(item)) return { ok: false, reason: "bad-shape" };
  const o = item as Record<string, unknown>;
  const { t, sp, pv, mv, mode, quality } = o;
  let nonFinite = false;
  for (const v of [t, sp, pv, mv]) {
    if (typeof v === "number" && Number.isFinite(v)) continue;
    if (isNonFiniteMarker(v)) nonFinite = true;
    else return { ok: false, reason: "bad-shape" };
  }
  if (typeof mode !== "string" || !(LOOP_MODES as readonly string[]).includes(mode)) return { ok: false, reason: "bad-shape" };
  if (quality !== undefined && (typeof quality !== "string" || !(SAMPLE_QUALITIES as readonly string[]).includes(quality))) return { ok: false, reason: "bad-shape" };
  if (nonFinite) return { ok: false, reason: "non-finite" };
  if (!Number.isSafeInteger(t) || (t as number) < 0) return { ok: false, reason: "bad-shape" };
  const sample: SampleDto = { t: t as number, sp: sp as number, pv: pv as number, mv: mv as number, mode: mode as LoopMode };
  // "good" is the default and is not carried (keeps samples to the browser lean)
  if (quality !== undefined && quality !== "good") sample.quality = quality as SampleQuality;
  return { ok: true, sample };
}
