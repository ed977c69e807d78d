/**
 * Sparkplug B payloads through the `sparkplug-payload` codec's protobuf type (Eclipse Tahu's
 * sparkplug_b.proto). Its high-level `decodePayload` needs every metric's datatype, but data
 * messages may leave it out (Sparkplug 3.0: datatype is required in births only), so values are
 * read here from the protobuf `value` oneof, typed later by the birth. Never throws: a payload
 * that is not usable gives one counted reason.
 */
import protoModule, { type org } from "sparkplug-payload/lib/sparkplugPayloadProto";
import type { MetricValue } from "@/lib/domain/sparkplug";

export type { MetricValue } from "@/lib/domain/sparkplug";

// a CommonJS module: its namespace object is the default export under Node's ESM loader
const ProtoPayload = (protoModule as unknown as { org: typeof org }).org.eclipse.tahu.protobuf.Payload;

/** Sparkplug 3.0 §6.4.16 datatypes Rimguard reads as scalars (the rest are kept as "other"). */
export const DATATYPES = {
  Int8: 1, Int16: 2, Int32: 3, Int64: 4, UInt8: 5, UInt16: 6, UInt32: 7, UInt64: 8,
  Float: 9, Double: 10, Boolean: 11, String: 12, DateTime: 13, Text: 14,
} as const;

/** Beyond this a payload is refused whole: no gateway needs it for loops, and it bounds the work. */
export const MAX_METRICS = 2_000;
export const MAX_NAME_LENGTH = 255;



export interface RawMetric {
  name: string | null;
  alias: number | null;
  /** Epoch ms, when the metric carries its own time. */
  timestamp: number | null;
  datatype: number | null;
  /** The value as sent; `undefined` = none, or a kind Rimguard does not read (dataset, template, bytes, arrays). */
  value: MetricValue | undefined;
  historical: boolean;
  transient: boolean;
}

export interface DecodedPayload {
  timestamp: number | null;
  seq: number | null;
  metrics: RawMetric[];
}

export type SparkplugRejectReason = "sp-bad-payload" | "sp-too-many-metrics";
export type DecodeResult = { ok: true; payload: DecodedPayload } | { ok: false; reason: SparkplugRejectReason };

interface LongLike {
  toNumber(): number;
  toString(): string;
}
const isLong = (v: unknown): v is LongLike => typeof v === "object" && v !== null && typeof (v as Partial<LongLike>).toNumber === "function";

function num(v: unknown): number | null {
  if (typeof v === "number") return v;
  return isLong(v) ? v.toNumber() : null;
}

export function decodeSparkplugPayload(bytes: Uint8Array): DecodeResult {
  let p: org.eclipse.tahu.protobuf.Payload;
  try {
    p = ProtoPayload.decode(bytes);
  } catch {
    return { ok: false, reason: "sp-bad-payload" };
  }
  const list = p.metrics ?? [];
  if (list.length > MAX_METRICS) return { ok: false, reason: "sp-too-many-metrics" };
  const metrics: RawMetric[] = [];
  for (const m of list) {
    const name = typeof m.name === "string" && m.name.length > 0 ? m.name : null;
    if (name !== null && name.length > MAX_NAME_LENGTH) return { ok: false, reason: "sp-bad-payload" };
    metrics.push({
      name,
      alias: Object.prototype.hasOwnProperty.call(m, "alias") ? num(m.alias) : null,
      timestamp: Object.prototype.hasOwnProperty.call(m, "timestamp") ? num(m.timestamp) : null,
      datatype: Object.prototype.hasOwnProperty.call(m, "datatype") ? (m.datatype ?? null) : null,
      value: m.isNull ? null : rawValue(m),
      historical: m.isHistorical === true,
      transient: m.isTransient === true,
    });
  }
  return {
    ok: true,
    payload: {
      timestamp: Object.prototype.hasOwnProperty.call(p, "timestamp") ? num(p.timestamp) : null,
      seq: Object.prototype.hasOwnProperty.call(p, "seq") ? num(p.seq) : null,
      metrics,
    },
  };
}

function rawValue(m: org.eclipse.tahu.protobuf.Payload.IMetric & { value?: string }): MetricValue | undefined {
  switch (m.value) {
    case "intValue":
      return m.intValue ?? undefined;
    case "longValue":
      // the unsigned 64-bit text, typed by the datatype later (uint64 on the wire)
      return isLong(m.longValue) ? m.longValue.toString() : typeof m.longValue === "number" ? String(m.longValue) : undefined;
    case "floatValue":
      return m.floatValue ?? undefined;
    case "doubleValue":
      return m.doubleValue ?? undefined;
    case "booleanValue":
      return m.booleanValue ?? undefined;
    case "stringValue":
      return m.stringValue ?? undefined;
    default:
      return undefined;
  }
}

/**
 * A metric's value as its datatype says (the birth's datatype when the data message left it
 * out). Integers come as uint32/uint64 on the wire (sparkplug_b.proto): signed kinds are
 * reinterpreted. Returns undefined when the value does not fit the datatype (counted by the caller).
 */
export function typedValue(datatype: number, value: MetricValue | undefined): MetricValue | undefined {
  if (value === null) return null;
  if (value === undefined) return undefined;
  switch (datatype) {
    case DATATYPES.Int8:
    case DATATYPES.Int16:
    case DATATYPES.Int32:
      return typeof value === "number" ? value | 0 : undefined;
    case DATATYPES.UInt8:
    case DATATYPES.UInt16:
      return typeof value === "number" ? value >>> 0 : undefined;
    case DATATYPES.Int64:
    case DATATYPES.UInt32:
    case DATATYPES.UInt64:
    case DATATYPES.DateTime: {
      if (typeof value !== "string" || !/^\d{1,20}$/.test(value)) return undefined;
      const u = BigInt.asUintN(64, BigInt(value));
      if (datatype === DATATYPES.UInt32) return Number(BigInt.asUintN(32, u));
      return Number(datatype === DATATYPES.Int64 ? BigInt.asIntN(64, u) : u);
    }
    case DATATYPES.Float:
    case DATATYPES.Double:
      return typeof value === "number" ? value : undefined;
    case DATATYPES.Boolean:
      return typeof value === "boolean" ? value : undefined;
    case DATATYPES.String:
    case DATATYPES.Text:
      return typeof value === "string" ? value : undefined;
    default:
      return undefined;
  }
}
