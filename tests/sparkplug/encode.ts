/**
 * Sparkplug B payloads encoded by Python's protobuf runtime from sparkplug_b.proto (encode.py),
 * independently of the codec the product decodes with. One Python run per call, so callers batch.
 */
import { execFileSync } from "node:child_process";
import path from "node:path";
import { PYTHON } from "../helpers/python";

export interface MetricSpec {
  name?: string;
  alias?: number;
  timestamp?: number;
  /** Sparkplug 3.0 datatype code (Int32 3, Int64 4, UInt64 8, Float 9, Double 10, Boolean 11, String 12). */
  datatype?: number;
  value?: number | boolean | string | null;
  /** Force the value into this protobuf field (wrong-type payloads). */
  field?: string;
  is_historical?: boolean;
  is_null?: boolean;
}
export interface PayloadSpec {
  timestamp?: number;
  seq?: number;
  metrics?: MetricSpec[];
}


export function encodeWithPython(specs: PayloadSpec[]): Buffer[] {
  const out = execFileSync(PYTHON, [path.join(__dirname, "encode.py")], { input: JSON.stringify(specs), encoding: "utf8", maxBuffer: 256 * 1024 * 1024 });
  return out.trim().split("\n").filter(Boolean).map((h) => Buffer.from(h, "hex"));
}

export const DT = { Int32: 3, Int64: 4, UInt64: 8, Float: 9, Double: 10, Boolean: 11, String: 12, Bytes: 17 } as const;
