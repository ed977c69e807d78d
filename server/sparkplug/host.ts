/**
 * Sparkplug B ingest, beside the JSON topic (docs/architecture.md §5): messages from the broker's
 * one dispatch are decoded (payload.ts), run through the edge-node state machine (state.ts),
 * resampled to each mapped loop's period (resample.ts) and handed to the same ingest as JSON
 * telemetry (validation, counters, trackers, history). Rimguard is a read-only host: it publishes
 * nothing in the namespace (no STATE, no NCMD/DCMD, no rebirth request).
 *
 * Tenancy: a group id belongs to one tenant (sparkplug_groups). The embedded broker refuses a
 * credential's publish under another tenant's (or nobody's) group; behind an external broker,
 * which does not say who published, the group's owner is the tenant.
 */
import type { Sequelize } from "sequelize";
import { loadSparkplugBirths, loadSparkplugGroups, loadSparkplugMappings, saveSparkplugBirths } from "@/lib/data/sparkplug";
import type { BirthRecord, LoopMapping } from "@/lib/domain/sparkplug";
import { MAX_PAYLOAD_BYTES, type RejectReason } from "@/lib/domain/telemetry";
import type { BrokerMessage, TopicNamespace } from "@/server/broker";
import { EXTERNAL_BROKER } from "@/server/broker/types";
import type { DeviceCredential } from "@/server/broker/credentials";
import type { Ingest, IngestCounters, LoopDirectory, DeviceIdentity } from "@/server/ingest";
import type { TrackerRegistry } from "@/server/tracking/registry";
import { decodeSparkplugPayload } from "./payload";
import { LoopResampler, type HeldSample } from "./resample";
import { SparkplugNodes, type MetricUpdate, type SparkplugOutcome } from "./state";
import { groupOfTopic, isSparkplugTopic, parseSparkplugTopic, type SparkplugTopic } from "./topic";

/** Where groups, mappings and births are kept (MariaDB through lib/data/sparkplug.ts; the bench passes memory). */
export interface SparkplugStore {
  loadGroups(): Promise<Map<string, number>>;
  loadMappings(): Promise<LoopMapping[]>;
  loadBirths(): Promise<(BirthRecord & { tenantId: number })[]>;
  saveBirths(rows: readonly { tenantId: number; record: BirthRecord }[]): Promise<void>;
}

export function databaseStore(sequelize: Sequelize): SparkplugStore {
  return {
    loadGroups: () => loadSparkplugGroups(sequelize),
    loadMappings: () => loadSparkplugMappings(sequelize),
    loadBirths: () => loadSparkplugBirths(sequelize),
    saveBirths: (rows) => saveSparkplugBirths(sequelize, rows),
  };
}

export interface SparkplugHostOptions {
  store: SparkplugStore;
  ingest: Ingest;
  counters: IngestCounters;
  directory: LoopDirectory;
  registry: TrackerRegistry;
  now: () => number;
}

const deviceKey = (g: string, e: string, d: string) => `${g}/${e}/${d}`;

export class SparkplugHost {
  readonly nodes = new SparkplugNodes();
  private groups = new Map<string, number>();
  /** (group/edge/device) -> resamplers of the loops mapped to it. */
  private byDevice = new Map<string, LoopResampler[]>();
  private pendingSave = new Map<string, { tenantId: number; record: BirthRecord }>();
  private saving: Promise<void> = Promise.resolve();
  /** Edge nodes (group/edge) heard from since the start, with who sent: only their loops are filled by the tick, counted for that sender. */
  private readonly heard = new Map<string, DeviceIdentity>();
  saveError: string | null = null;

  constructor(private readonly opts: SparkplugHostOptions) {}

  /** Load group owners, mappings and the persisted births; loops of dead sources are stale at once. */
  async start(): Promise<void> {
    const births = await this.opts.store.loadBirths();
    this.nodes.restore(births);
    await this.reload();
    // the held values resume (a set point may have come only in the birth), but nothing is filled
    // across the time Rimguard was down, nor before the edge node is heard from again
    const now = this.opts.now();
    for (const list of this.byDevice.values()) for (const r of list) r.reset(now);
    for (const b of births) if (b.deadAt !== null) this.markGone(b.groupId, b.edgeNode, [b.device], "Sparkplug source dead at the last restart");
  }

  /** Re-read group owners and mappings (after an admin's change). */
  async reload(): Promise<void> {
    const [groups, mappings] = await Promise.all([this.opts.store.loadGroups(), this.opts.store.loadMappings()]);
    this.groups = groups;
    const old = new Map<number, LoopResampler>();
    for (const list of this.byDevice.values()) for (const r of list) old.set(r.mapping.loopId, r);
    const byDevice = new Map<string, LoopResampler[]>();
    for (const m of mappings) {
      if (groups.get(m.groupId) !== m.tenantId) continue; // the group changed hands: the mapping is void
      const periodMs = Math.round((this.opts.registry.get(m.loopId)?.config.telemetryPeriodS ?? 1) * 1000);
      const prev = old.get(m.loopId);
      const r = prev && sameMapping(prev.mapping, m) && prev.periodMs === periodMs ? prev : this.seeded(new LoopResampler(m, periodMs));
      const k = deviceKey(m.groupId, m.edgeNode, m.device);
      byDevice.set(k, [...(byDevice.get(k) ?? []), r]);
    }
    this.byDevice = byDevice;
  }

  /** The publish rule for the embedded broker. */
  namespace(): TopicNamespace {
    return {
      owns: isSparkplugTopic,
      authorize: (topic: string, cred: DeviceCredential) => {
        const t = parseSparkplugTopic(topic);
        if (!t) return { reason: "bad-topic", why: "not a Sparkplug B edge node or device topic" };
        if (t.type === "NCMD" || t.type === "DCMD") return { reason: "unauthorised", why: "Rimguard is read-only: no commands through its broker" };
        if (this.groups.get(t.groupId) !== cred.tenantId) return { reason: "wrong-tenant", why: "group id not bound to the credential's tenant" };
        return null;
      },
    };
  }

  /** One message from the dispatch. Never throws. */
  handle(msg: BrokerMessage): SparkplugOutcome | null {
    const now = this.opts.now();
    const counters = this.opts.counters;
    const group = groupOfTopic(msg.topic);
    if (group === null) return null; // STATE of some host application: not ours to read
    const owner = this.groups.get(group);
    const device: DeviceIdentity = msg.device === EXTERNAL_BROKER || msg.device.tenantId === null ? { key: `(external broker) sparkplug ${group}`, tenantId: owner ?? null, tenantSlug: null, siteSlug: null } : msg.device;
    counters.message(device, now);
    const reject = (reason: RejectReason, n = 1) => counters.reject(device, reason, now, n);
    if (owner === undefined) return reject("sp-unbound-group"), null;
    if (device.tenantId !== null && device.tenantId !== owner) return reject("wrong-tenant"), null;
    if (msg.retain) return reject("retained"), null;
    if (msg.payload.byteLength > MAX_PAYLOAD_BYTES) return reject("too-large"), null;
    const topic = parseSparkplugTopic(msg.topic);
    if (!topic) return reject("bad-topic"), null;
    const decoded = decodeSparkplugPayload(msg.payload);
    if (!decoded.ok) return reject(decoded.reason), null;
    this.heard.set(`${topic.groupId}/${topic.edgeNode}`, device);
    const out = this.nodes.handle(topic, decoded.payload, now);
    for (const [reason, n] of Object.entries(out.problems)) reject(reason as RejectReason, n);
    for (const ev of out.events) {
      if (ev.kind === "birth" || ev.kind === "flag") this.queueSave(owner, ev.record);
      else if (ev.kind === "death") {
        this.markGone(ev.groupId, ev.edgeNode, ev.devices, `Sparkplug ${ev.devices.length > 1 || ev.devices[0] === "" ? "NDEATH" : "DDEATH"} of ${ev.edgeNode}`);
        for (const d of ev.devices) {
          const r = this.nodes.find(ev.groupId, ev.edgeNode, d);
          if (r) this.queueSave(owner, r);
        }
      } else this.feed(topic, ev.device, ev.updates, device, reject);
    }
    return out;
  }

  /** Fill the grid of every live mapped loop up to `now` (report by exception: silence means unchanged). */
  tick(now = this.opts.now()): void {
    for (const [k, list] of this.byDevice) {
      const [g = "", e = "", d = ""] = k.split("/");
      const rec = this.nodes.find(g, e, d);
      const sender = this.heard.get(`${g}/${e}`);
      if (!rec || rec.deadAt !== null || !sender) continue;
      for (const r of list) {
        const until = now - Math.max(r.periodMs, 1_000);
        if (!(r.newest > -Infinity)) continue;
        this.push(r, r.advance(until), sender, false);
      }
    }
  }

  /** Persist births changed by data (held values) and any pending births; call periodically and at stop. */
  async flush(): Promise<void> {
    for (const r of this.nodes.takeDirty()) {
      const owner = this.groups.get(r.groupId);
      if (owner !== undefined) this.queueSave(owner, r);
    }
    await this.saving;
  }

  private feed(topic: SparkplugTopic, dev: string, updates: MetricUpdate[], device: DeviceIdentity, reject: (r: RejectReason, n?: number) => void): void {
    const list = this.byDevice.get(deviceKey(topic.groupId, topic.edgeNode, dev));
    if (!list) {
      if (topic.type === "DDATA") reject("sp-unmapped");
      return;
    }
    const live = updates.filter((u) => !u.historical).sort((a, b) => a.t - b.t);
    const history = updates.filter((u) => u.historical).sort((a, b) => a.t - b.t);
    for (const r of list) {
      if (history.length > 0) {
        // store-and-forward: resampled on its own copy of the held values, written as history
        const h = r.fork();
        const samples = h.apply(history);
        this.push(r, samples.concat(h.advance(history[history.length - 1]!.t)).filter((s, i, a) => i === 0 || s.t > a[i - 1]!.t), device, true);
      }
      if (live.length > 0) this.push(r, r.apply(live), device, false);
    }
  }

  private push(r: LoopResampler, samples: HeldSample[], device: DeviceIdentity, historical: boolean): void {
    if (samples.length === 0) return;
    const route = this.opts.directory.get(r.mapping.loopId);
    if (!route || route.tenantId !== r.mapping.tenantId) return;
    this.opts.ingest.takeSamples(route, device, samples, { historical });
  }

  private markGone(groupId: string, edgeNode: string, devices: string[], reason: string): void {
    for (const d of devices) {
      for (const r of this.byDevice.get(deviceKey(groupId, edgeNode, d)) ?? []) {
        r.reset(this.opts.now());
        this.opts.registry.markSourceGone(r.mapping.loopId, reason);
      }
    }
  }

  private seeded(r: LoopResampler): LoopResampler {
    const m = r.mapping;
    const rec = this.nodes.find(m.groupId, m.edgeNode, m.device);
    if (rec && rec.deadAt === null) r.apply(rec.metrics.flatMap((x) => (x.value === undefined ? [] : [{ name: x.name, t: x.t, value: x.value }])).sort((a, b) => a.t - b.t));
    return r;
  }

  private queueSave(tenantId: number, record: BirthRecord): void {
    this.pendingSave.set(deviceKey(record.groupId, record.edgeNode, record.device), { tenantId, record });
    this.saving = this.saving.then(async () => {
      if (this.pendingSave.size === 0) return;
      const rows = [...this.pendingSave.values()].map((x) => ({ tenantId: x.tenantId, record: { ...x.record, metrics: [...x.record.metrics] } }));
      this.pendingSave.clear();
      try {
        await this.opts.store.saveBirths(rows);
        this.saveError = null;
      } catch (err) {
        this.saveError = err instanceof Error ? err.message : String(err);
        console.error("[sparkplug] saving births failed:", this.saveError);
      }
    });
  }
}

function sameMapping(a: LoopMapping, b: LoopMapping): boolean {
  return a.tenantId === b.tenantId && a.groupId === b.groupId && a.edgeNode === b.edgeNode && a.device === b.device && a.sp === b.sp && a.pv === b.pv && a.mv === b.mv && a.mode === b.mode;
}
