/**
 * Sparkplug B as the console and the data layer see it (docs/architecture.md §5): the births
 * Rimguard keeps per edge node and device, the mapping of a device's metrics to a loop's SP, PV,
 * MV and mode, and its validation. Browser-safe: the decoding lives in server/sparkplug.
 */
import { z } from "zod";

export type MetricValue = number | boolean | string | null;

export interface MetricDef {
  name: string;
  alias: number | null;
  /** Sparkplug 3.0 datatype code (1..14 are the scalars Rimguard reads). */
  datatype: number;
  /** The last value seen (birth, then data); undefined for kinds Rimguard does not read. */
  value: MetricValue | undefined;
  /** Epoch ms of that value. */
  t: number;
}

export interface BirthRecord {
  groupId: string;
  edgeNode: string;
  /** '' for the edge node's own birth. */
  device: string;
  bdSeq: number | null;
  metrics: MetricDef[];
  bornAt: number;
  deadAt: number | null;
  /** Why Rimguard needs a rebirth from this node or device (it never asks for one: read-only). */
  needsRebirth: string | null;
}

export interface LoopMapping {
  loopId: number;
  tenantId: number;
  groupId: string;
  edgeNode: string;
  device: string;
  sp: string;
  pv: string;
  mv: string;
  /** null: the loop is taken as in automatic (the gateway has no mode metric). */
  mode: string | null;
}

/** Datatypes a loop signal may have: integers, floats (SP, PV, MV); also boolean and strings for the mode. */
export const NUMERIC_DATATYPES: readonly number[] = [1, 2, 3, 4, 5, 6, 7, 8, 9, 10];
export const MODE_DATATYPES: readonly number[] = [...NUMERIC_DATATYPES, 11, 12, 14];

const DATATYPE_NAMES: Record<number, string> = {
  1: "Int8", 2: "Int16", 3: "Int32", 4: "Int64", 5: "UInt8", 6: "UInt16", 7: "UInt32", 8: "UInt64",
  9: "Float", 10: "Double", 11: "Boolean", 12: "String", 13: "DateTime", 14: "Text",
};

export function datatypeName(code: number | null): string {
  return (code !== null && DATATYPE_NAMES[code]) || `other (${code ?? "none"})`;
}

/** Sparkplug ids Rimguard takes: letters, digits and `._:-`, 1 to 64 characters (no MQTT wildcards or levels). */
export const SPARKPLUG_ID = /^[A-Za-z0-9._:-]{1,64}$/;

export function isSparkplugId(s: string): boolean {
  return SPARKPLUG_ID.test(s);
}

const id = z.string().trim().regex(SPARKPLUG_ID, "Letters, digits and . _ : - only, 1 to 64 characters.");
const metric = z.string().trim().min(1, "Choose a metric.").max(255);

export const bindGroupSchema = z.object({ groupId: id, reason: z.string().trim().max(500).optional() }).strict();

export const mappingSchema = z
  .object({
    loopId: z.number().int().positive(),
    groupId: id,
    edgeNode: id,
    device: z.union([id, z.literal("")]),
    sp: metric,
    pv: metric,
    mv: metric,
    mode: metric.nullable(),
    reason: z.string().trim().max(500).optional(),
  })
  .strict();
export type MappingInput = z.infer<typeof mappingSchema>;

/**
 * Check a mapping against the metrics of the device's last birth: each named metric must be
 * there, SP/PV/MV numeric, the mode numeric, boolean or a string, and no metric used twice.
 * Returns the problems per field (empty = valid).
 */
export function checkMappingAgainstBirth(m: Pick<MappingInput, "sp" | "pv" | "mv" | "mode">, birth: Pick<BirthRecord, "metrics"> | null): Partial<Record<"sp" | "pv" | "mv" | "mode" | "device", string>> {
  const errors: Partial<Record<"sp" | "pv" | "mv" | "mode" | "device", string>> = {};
  if (!birth) {
    errors.device = "No birth seen from this device yet: its metrics are not known.";
    return errors;
  }
  const byName = new Map(birth.metrics.map((x) => [x.name, x]));
  const seen = new Map<string, string>();
  for (const field of ["sp", "pv", "mv", "mode"] as const) {
    const name = m[field];
    if (name === null) continue;
    const def = byName.get(name);
    if (!def) errors[field] = `Metric "${name}" is not in the device's last birth.`;
    else if (!(field === "mode" ? MODE_DATATYPES : NUMERIC_DATATYPES).includes(def.datatype)) errors[field] = `Metric "${name}" is ${datatypeName(def.datatype)}, not ${field === "mode" ? "a number, boolean or string" : "a number"}.`;
    else if (seen.has(name)) errors[field] = `Metric "${name}" is already the ${seen.get(name)!.toUpperCase()}.`;
    seen.set(name, field);
  }
  return errors;
}

/** What the admin sees of one edge node or device. */
export interface SparkplugSourceDto {
  groupId: string;
  edgeNode: string;
  device: string;
  bdSeq: number | null;
  bornAt: string;
  deadAt: string | null;
  needsRebirth: string | null;
  metrics: { name: string; alias: number | null; datatype: string; value: MetricValue | null }[];
}

export interface SparkplugOverviewDto {
  groups: string[];
  sources: SparkplugSourceDto[];
  mappings: (Omit<LoopMapping, "tenantId"> & { loopTag: string })[];
}

/**
 * Where the simulators' Sparkplug mode publishes a loop, and what the demo seed maps: the
 * tenant's slug as group id; one edge node per device credential, `sim-<site>` for a credential
 * bound to a site (the demo's) with one device per loop, or `sim` for a tenant-wide one with
 * devices `<site>.<loop>`; metrics SP, PV, MV and MODE (a string) with aliases 1 to 4.
 */
export const SIM_METRICS = [
  { name: "SP", alias: 1 },
  { name: "PV", alias: 2 },
  { name: "MV", alias: 3 },
  { name: "MODE", alias: 4 },
] as const;

export function simulatorSparkplugIds(tenantSlug: string, siteSlug: string, loopSlug: string, siteBound = true): { groupId: string; edgeNode: string; device: string } {
  return siteBound ? { groupId: tenantSlug, edgeNode: `sim-${siteSlug}`, device: loopSlug } : { groupId: tenantSlug, edgeNode: "sim", device: `${siteSlug}.${loopSlug}` };
}
