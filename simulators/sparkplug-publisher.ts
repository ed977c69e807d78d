/**
 * The simulators' Sparkplug B mode (`--protocol sparkplug`): the same telemetry the JSON mode
 * publishes, as an edge node per credential (tenant/site) would send it through the
 * `sparkplug-payload` codec. On connect an NBIRTH with the session's bdSeq (and the matching
 * NDEATH as MQTT will); a DBIRTH per loop with its first sample (SP, PV, MV, MODE, aliases 1-4);
 * then DDATA by alias with only the metrics that changed (report by exception), each with its
 * sample time. seq counts 0-255 per edge node. Ids: lib/domain/sparkplug.ts `simulatorSparkplugIds` (site-bound or tenant-wide credential).
 */
import mqtt, { type MqttClient } from "mqtt";
import sparkplug from "sparkplug-payload";
import { SIM_METRICS, simulatorSparkplugIds } from "@/lib/domain/sparkplug";
import type { DeviceCredential, TelemetryPublisher } from "./publisher";

const codec = sparkplug.get("spBv1.0")!;
type Sample = { t: number; sp: number; pv: number; mv: number; mode: string };
const TYPES = { SP: "Double", PV: "Double", MV: "Double", MODE: "String" } as const;

interface EdgeNode {
  client: MqttClient;
  groupId: string;
  edgeNode: string;
  bdSeq: number;
  seq: number;
  born: Map<string, Sample>;
}

/** Encode one Sparkplug payload (exported for the bench). */
export function encodeSparkplug(payload: { timestamp: number; seq?: number; metrics: { name?: string; alias?: number; type: string; value: unknown; timestamp?: number }[] }): Buffer {
  return Buffer.from(codec.encodePayload(payload as Parameters<typeof codec.encodePayload>[0]));
}

/** The metrics of one sample: all of them (a birth), or those that differ from `prev` (by alias). */
export function sampleMetrics(s: Sample, prev: Sample | null): { name?: string; alias: number; type: string; value: unknown; timestamp: number }[] {
  const out = [];
  for (const m of SIM_METRICS) {
    const key = m.name === "MODE" ? "mode" : (m.name.toLowerCase() as "sp" | "pv" | "mv");
    if (prev && prev[key] === s[key]) continue;
    out.push({ ...(prev ? {} : { name: m.name }), alias: m.alias, type: TYPES[m.name], value: s[key], timestamp: s.t });
  }
  return out;
}

export async function connectSparkplugPublisher(url: string, credentials: Record<string, DeviceCredential>, options: { qos?: 0 | 1; /** PEM certificate(s) to trust for mqtts. */ ca?: Buffer } = {}): Promise<TelemetryPublisher> {
  const nodes = new Map<string, EdgeNode>();
  let errors = 0;
  const qos = options.qos ?? 0;
  const send = (n: EdgeNode, type: string, device: string, metrics: ReturnType<typeof sampleMetrics>, timestamp: number) => {
    const topic = `spBv1.0/${n.groupId}/${type}/${n.edgeNode}${device ? `/${device}` : ""}`;
    const body = encodeSparkplug({ timestamp, seq: n.seq, metrics });
    n.seq = (n.seq + 1) % 256;
    n.client.publish(topic, body, { qos, retain: false }, (err) => {
      if (err) errors++;
    });
  };
  const birth = (n: EdgeNode) => {
    n.seq = 0;
    n.born.clear();
    send(n, "NBIRTH", "", [{ name: "bdSeq", alias: 0, type: "UInt64", value: n.bdSeq, timestamp: Date.now() }], Date.now());
  };
  for (const [key, cred] of Object.entries(credentials)) {
    const [tenantSlug = "", siteSlug = ""] = key.split("/");
    const ids = simulatorSparkplugIds(tenantSlug, siteSlug, "", key.includes("/"));
    const bdSeq = Math.floor(Date.now() / 1000) % 256;
    const will = { topic: `spBv1.0/${ids.groupId}/NDEATH/${ids.edgeNode}`, payload: encodeSparkplug({ timestamp: Date.now(), metrics: [{ name: "bdSeq", type: "UInt64", value: bdSeq }] }), qos: 1 as const, retain: false };
    let client: MqttClient;
    try {
      client = await mqtt.connectAsync(url, { username: cred.username, password: cred.password, clientId: cred.clientId, protocolVersion: 4, reconnectPeriod: 2_000, clean: true, will, ...(options.ca ? { ca: options.ca } : {}) });
    } catch (e) {
      await Promise.all([...nodes.values()].map((n) => n.client.endAsync(true).catch(() => undefined)));
      throw new Error(`simulator could not connect to the MQTT broker at ${url}: ${(e as Error).message}`);
    }
    const node: EdgeNode = { client, groupId: ids.groupId, edgeNode: ids.edgeNode, bdSeq, seq: 0, born: new Map() };
    client.on("error", () => errors++);
    client.on("connect", () => birth(node)); // a reconnect is a new session for the host: birth again
    nodes.set(key, node);
    birth(node);
  }
  return {
    get errors() {
      return errors;
    },
    async publish(topic, payload) {
      const [, tenantSlug = "", siteSlug = "", loopSlug = ""] = topic.split("/");
      const siteBound = nodes.has(`${tenantSlug}/${siteSlug}`);
      const node = nodes.get(`${tenantSlug}/${siteSlug}`) ?? nodes.get(tenantSlug);
      if (!node) {
        errors++;
        throw new Error(`no device credential for the site or tenant of ${topic}`);
      }
      const parsed = JSON.parse(payload) as Sample | Sample[];
      const samples = Array.isArray(parsed) ? parsed : [parsed];
      const { device } = simulatorSparkplugIds(tenantSlug, siteSlug, loopSlug, siteBound);
      let prev = node.born.get(device) ?? null;
      const metrics: ReturnType<typeof sampleMetrics> = [];
      for (const s of samples) {
        if (!prev) {
          send(node, "DBIRTH", device, sampleMetrics(s, null), s.t);
        } else metrics.push(...sampleMetrics(s, prev));
        prev = s;
      }
      node.born.set(device, prev!);
      if (metrics.length > 0) send(node, "DDATA", device, metrics, samples[samples.length - 1]!.t);
    },
    async close() {
      await Promise.all([...nodes.values()].map((n) => n.client.endAsync().catch(() => undefined)));
    },
  };
}
