/**
 * The Sparkplug B edge-node state machine (Sparkplug 3.0 §5, §6), pure: births register metrics
 * and aliases, data is decoded by alias, sequence numbers are checked, deaths end a session.
 * Rimguard is a read-only host: it never sends NCMD/DCMD (a rebirth request included), so a gap
 * or an unknown alias is counted and the node or device is marked as needing a rebirth for the
 * admin to see, and decoding goes on with the aliases it has. Births are not retained, so each
 * one is handed out (`birth` events) to be persisted and `restore`d after a restart; an NDEATH
 * whose bdSeq is not that of the current birth is stale (an old session's will) and is ignored.
 */
import type { BirthRecord, MetricDef, MetricValue } from "@/lib/domain/sparkplug";
import { DATATYPES, typedValue, type DecodedPayload, type RawMetric } from "./payload";

export type { BirthRecord, MetricDef } from "@/lib/domain/sparkplug";
import type { SparkplugTopic } from "./topic";

export const SPARKPLUG_PROBLEMS = ["sp-seq-gap", "sp-unknown-alias", "sp-no-birth", "sp-stale-death", "sp-bad-metric", "sp-bad-birth"] as const;
export type SparkplugProblem = (typeof SPARKPLUG_PROBLEMS)[number];

export interface MetricUpdate {
  name: string;
  t: number;
  value: MetricValue;
  historical: boolean;
}

export type SparkplugEvent =
  | { kind: "birth"; record: BirthRecord }
  | { kind: "values"; groupId: string; edgeNode: string; device: string; updates: MetricUpdate[] }
  | { kind: "death"; groupId: string; edgeNode: string; devices: string[]; at: number }
  | { kind: "flag"; record: BirthRecord };

export interface SparkplugOutcome {
  events: SparkplugEvent[];
  problems: Partial<Record<SparkplugProblem, number>>;
}

interface Entity {
  record: BirthRecord;
  byAlias: Map<number, MetricDef>;
  byName: Map<string, MetricDef>;
}

interface NodeState extends Entity {
  /** The last sequence number taken; null after a restore (the next one is the baseline). */
  lastSeq: number | null;
  devices: Map<string, Entity>;
}

const nodeKey = (groupId: string, edgeNode: string) => `${groupId}/${edgeNode}`;
const BD_SEQ = "bdSeq";

function entityOf(record: BirthRecord): Entity {
  const byAlias = new Map<number, MetricDef>();
  const byName = new Map<string, MetricDef>();
  for (const m of record.metrics) {
    byName.set(m.name, m);
    if (m.alias !== null) byAlias.set(m.alias, m);
  }
  return { record, byAlias, byName };
}

export class SparkplugNodes {
  private readonly nodes = new Map<string, NodeState>();
  /** Records changed by data since the last `takeDirty` (their held values, for persistence). */
  private readonly dirty = new Set<BirthRecord>();

  /** Births persisted before a restart (node records before their devices' is not required). */
  restore(records: readonly BirthRecord[]): void {
    for (const r of records.filter((x) => x.device === "")) {
      this.nodes.set(nodeKey(r.groupId, r.edgeNode), { ...entityOf(r), lastSeq: null, devices: new Map() });
    }
    for (const r of records.filter((x) => x.device !== "")) {
      this.nodes.get(nodeKey(r.groupId, r.edgeNode))?.devices.set(r.device, entityOf(r));
    }
  }

  records(): BirthRecord[] {
    const out: BirthRecord[] = [];
    for (const n of this.nodes.values()) {
      out.push(n.record);
      for (const d of n.devices.values()) out.push(d.record);
    }
    return out;
  }

  find(groupId: string, edgeNode: string, device: string): BirthRecord | null {
    const n = this.nodes.get(nodeKey(groupId, edgeNode));
    if (!n) return null;
    return device === "" ? n.record : (n.devices.get(device)?.record ?? null);
  }

  takeDirty(): BirthRecord[] {
    const out = [...this.dirty];
    this.dirty.clear();
    return out;
  }

  handle(topic: SparkplugTopic, p: DecodedPayload, receivedAt: number): SparkplugOutcome {
    const out: SparkplugOutcome = { events: [], problems: {} };
    const problem = (k: SparkplugProblem, n = 1) => (out.problems[k] = (out.problems[k] ?? 0) + n);
    const key = nodeKey(topic.groupId, topic.edgeNode);
    const node = this.nodes.get(key);
    const flag = (e: Entity, why: string) => {
      if (e.record.needsRebirth === null) {
        e.record.needsRebirth = why;
        out.events.push({ kind: "flag", record: e.record });
      }
    };
    const checkSeq = (n: NodeState) => {
      const seq = p.seq;
      if (seq === null || !Number.isInteger(seq) || seq < 0 || seq > 255) {
        problem("sp-seq-gap");
        flag(n, "message without a valid sequence number");
        return;
      }
      if (n.lastSeq !== null && seq !== (n.lastSeq + 1) % 256) {
        problem("sp-seq-gap");
        flag(n, `sequence gap: expected ${(n.lastSeq + 1) % 256}, got ${seq}`);
      }
      n.lastSeq = seq;
    };
    const when = (m: RawMetric) => m.timestamp ?? p.timestamp ?? receivedAt;

    switch (topic.type) {
      case "NCMD":
      case "DCMD":
        return out; // another host's commands; Rimguard sends none and reads none
      case "NBIRTH":
      case "DBIRTH": {
        if (topic.type === "DBIRTH") {
          if (!node || node.record.deadAt !== null) {
            problem("sp-no-birth");
            return out;
          }
          checkSeq(node);
        }
        const defs = this.birthMetrics(p, receivedAt, problem);
        if (!defs) {
          problem("sp-bad-birth");
          if (node) flag(topic.type === "NBIRTH" ? node : (node.devices.get(topic.device) ?? node), "birth refused (a metric without name or datatype, or an alias used twice)");
          return out;
        }
        const bd = defs.find((m) => m.name === BD_SEQ);
        const record: BirthRecord = {
          groupId: topic.groupId,
          edgeNode: topic.edgeNode,
          device: topic.device,
          bdSeq: topic.type === "NBIRTH" && typeof bd?.value === "number" ? bd.value : (node?.record.bdSeq ?? null),
          metrics: defs,
          bornAt: p.timestamp ?? receivedAt,
          deadAt: null,
          needsRebirth: null,
        };
        if (topic.type === "NBIRTH") {
          // a new session: its devices are born again after it
          this.nodes.set(key, { ...entityOf(record), lastSeq: p.seq ?? null, devices: new Map() });
        } else node!.devices.set(topic.device, entityOf(record));
        out.events.push({ kind: "birth", record });
        const updates = defs.flatMap((m) => (m.value === undefined || m.name === BD_SEQ ? [] : [{ name: m.name, t: m.t, value: m.value, historical: false }]));
        out.events.push({ kind: "values", groupId: topic.groupId, edgeNode: topic.edgeNode, device: topic.device, updates });
        return out;
      }
      case "NDEATH": {
        if (!node) return out;
        const bd = p.metrics.find((m) => m.name === BD_SEQ);
        const bdSeq = bd ? typedValue(bd.datatype ?? DATATYPES.UInt64, bd.value) : undefined;
        if (typeof bdSeq !== "number" || (node.record.bdSeq !== null && bdSeq !== node.record.bdSeq)) {
          problem("sp-stale-death");
          return out;
        }
        return this.die(node, null, p.timestamp ?? receivedAt, out);
      }
      case "DDEATH": {
        if (!node) {
          problem("sp-no-birth");
          return out;
        }
        checkSeq(node);
        return this.die(node, topic.device, p.timestamp ?? receivedAt, out);
      }
      case "NDATA":
      case "DDATA": {
        const entity = node && node.record.deadAt === null ? (topic.type === "NDATA" ? node : node.devices.get(topic.device)) : undefined;
        if (!node || !entity || entity.record.deadAt !== null) {
          problem("sp-no-birth", Math.max(1, p.metrics.length));
          if (node) flag(node, `${topic.type} of ${topic.device || topic.edgeNode} without a current birth`);
          return out;
        }
        checkSeq(node);
        const updates: MetricUpdate[] = [];
        for (const m of p.metrics) {
          const def = m.alias !== null ? entity.byAlias.get(m.alias) : m.name !== null ? entity.byName.get(m.name) : undefined;
          if (!def) {
            problem("sp-unknown-alias");
            flag(entity, m.alias !== null ? `unknown alias ${m.alias}` : `unknown metric ${m.name ?? "(no name)"}`);
            continue;
          }
          const v = typedValue(m.datatype ?? def.datatype, m.value);
          if (v === undefined) {
            problem("sp-bad-metric");
            continue;
          }
          const t = when(m);
          if (!m.historical && t >= def.t) {
            def.value = v;
            def.t = t;
            this.dirty.add(entity.record);
          }
          updates.push({ name: def.name, t, value: v, historical: m.historical });
        }
        if (updates.length > 0) out.events.push({ kind: "values", groupId: topic.groupId, edgeNode: topic.edgeNode, device: topic.device, updates });
        return out;
      }
    }
  }

  private die(node: NodeState, device: string | null, at: number, out: SparkplugOutcome): SparkplugOutcome {
    const dead: Entity[] = device === null ? [node, ...node.devices.values()] : [node.devices.get(device)].filter((e): e is Entity => !!e);
    for (const e of dead) {
      e.record.deadAt = at;
      this.dirty.add(e.record);
    }
    out.events.push({ kind: "death", groupId: node.record.groupId, edgeNode: node.record.edgeNode, devices: dead.map((e) => e.record.device), at });
    return out;
  }

  /** A birth's metric definitions, or null when the birth is not usable as a whole. */
  private birthMetrics(p: DecodedPayload, receivedAt: number, problem: (k: SparkplugProblem) => void): MetricDef[] | null {
    const defs: MetricDef[] = [];
    const names = new Set<string>();
    const aliases = new Set<number>();
    for (const m of p.metrics) {
      if (m.name === null || m.datatype === null || names.has(m.name)) return null;
      if (m.alias !== null) {
        if (aliases.has(m.alias)) return null;
        aliases.add(m.alias);
      }
      names.add(m.name);
      const v = typedValue(m.datatype, m.value);
      if (v === undefined && m.value !== undefined) problem("sp-bad-metric");
      defs.push({ name: m.name, alias: m.alias, datatype: m.datatype, value: v, t: m.timestamp ?? p.timestamp ?? receivedAt });
    }
    return defs;
  }
}
