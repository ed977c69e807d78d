/**
 * The simulators' Sparkplug B mode speaks what the host reads: their births and report-by-exception
 * DDATA (encoded by the sparkplug-payload codec on the simulator side) decode through the host's
 * state machine and resampler into the samples that were simulated. A consistency check between
 * the two ends of the demo; the decoder itself is checked against python3-protobuf in state.test.ts.
 */
import { describe, expect, it } from "vitest";
import { SIM_METRICS, simulatorSparkplugIds } from "@/lib/domain/sparkplug";
import { decodeSparkplugPayload } from "@/server/sparkplug/payload";
import { LoopResampler, type HeldSample } from "@/server/sparkplug/resample";
import { SparkplugNodes } from "@/server/sparkplug/state";
import { parseSparkplugTopic } from "@/server/sparkplug/topic";
import { encodeSparkplug, sampleMetrics } from "@/simulators/sparkplug-publisher";

describe("simulators' Sparkplug B mode", () => {
  it("gives back the simulated samples after birth, DDATA by alias and resampling", () => {
    const ids = simulatorSparkplugIds("vantrell", "marrow-fen", "fic-101");
    expect(ids).toEqual({ groupId: "vantrell", edgeNode: "sim-marrow-fen", device: "fic-101" });
    const nodes = new SparkplugNodes();
    const feed = (type: string, device: string, body: Buffer, at: number) => {
      const d = decodeSparkplugPayload(body);
      if (!d.ok) throw new Error(d.reason);
      return nodes.handle(parseSparkplugTopic(`spBv1.0/${ids.groupId}/${type}/${ids.edgeNode}${device ? `/${device}` : ""}`)!, d.payload, at);
    };
    const t0 = Date.UTC(2026, 11, 2, 9, 0, 0);
    feed("NBIRTH", "", encodeSparkplug({ timestamp: t0, seq: 0, metrics: [{ name: "bdSeq", type: "UInt64", value: 4 }] }), t0);
    const sims = Array.from({ length: 6 }, (_, i) => ({ t: t0 + i * 1000, sp: i < 3 ? 50 : 55, pv: 48 + i * 0.25, mv: i === 2 ? 30 : 31, mode: "auto" }));
    const r = new LoopResampler({ loopId: 1, tenantId: 1, ...ids, sp: "SP", pv: "PV", mv: "MV", mode: "MODE" }, 1000);
    const got: HeldSample[] = [];
    let prev = null;
    let seq = 1;
    for (const s of sims) {
      const metrics = sampleMetrics(s, prev);
      if (prev) expect(metrics.every((m) => m.name === undefined && SIM_METRICS.some((x) => x.alias === m.alias))).toBe(true);
      const out = feed(prev ? "DDATA" : "DBIRTH", ids.device, encodeSparkplug({ timestamp: s.t, seq: seq++, metrics }), s.t);
      expect(out.problems).toEqual({});
      for (const ev of out.events) if (ev.kind === "values") got.push(...r.apply(ev.updates));
      prev = s;
    }
    // the samples come back at their own times (the grid is whole seconds, as the sample times are)
    expect(got).toEqual(sims.map((s) => ({ t: s.t, sp: s.sp, pv: s.pv, mv: s.mv, mode: "auto" })));
  });
});

describe("simulators' Sparkplug mode through the embedded broker", () => {
  it("a tenant-wide credential's edge node feeds the mapped loops (the bench's wiring)", async () => {
    const { startBroker, StaticCredentials } = await import("@/server/broker");
    const { Ingest, LoopDirectory } = await import("@/server/ingest");
    const { TrackerRegistry } = await import("@/server/tracking/registry");
    const { SparkplugHost } = await import("@/server/sparkplug/host");
    const { SPARKPLUG_WILDCARD } = await import("@/server/sparkplug/topic");
    const { connectSparkplugPublisher } = await import("@/simulators/sparkplug-publisher");
    const { Bus, systemClock } = await import("@/server/context");
    const { credential, testContext } = await import("../pipeline/helpers");
    const ctx = testContext(systemClock);
    const loops = ["fic-1", "fic-2"].map((slug, i) => ({ loopId: i + 1, tenantId: 1, siteId: 1, tenantSlug: "sim-lab", siteSlug: "bench-1", loopSlug: slug }));
    const directory = new LoopDirectory(loops);
    const registry = new TrackerRegistry({ bus: new Bus(), clock: systemClock }, []);
    const got: { loopId: number; pv: number }[] = [];
    const ingest = new Ingest({ directory, now: () => Date.now(), sink: (route, samples) => got.push(...samples.map((s) => ({ loopId: route.loopId, pv: s.pv }))) });
    const mappings = loops.map((r) => ({ loopId: r.loopId, tenantId: 1, ...simulatorSparkplugIds(r.tenantSlug, r.siteSlug, r.loopSlug, false), sp: "SP", pv: "PV", mv: "MV", mode: "MODE" }));
    const host = new SparkplugHost({ store: { loadGroups: async () => new Map([["sim-lab", 1]]), loadMappings: async () => mappings, loadBirths: async () => [], saveBirths: async () => undefined }, ingest, counters: ingest.counters, directory, registry, now: () => Date.now() });
    await host.start();
    const cred = credential({ keyId: "sim-key", secret: "sim-secret-0123456789", tenantId: 1, tenantSlug: "sim-lab" });
    const broker = await startBroker(ctx, { credentials: new StaticCredentials([cred]), host: "127.0.0.1", port: 0, mqttUrl: null, tls: null, namespaces: [host.namespace()] });
    broker.subscribeInternal(SPARKPLUG_WILDCARD, (m) => void host.handle(m));
    const pub = await connectSparkplugPublisher(`mqtt://127.0.0.1:${broker.address()!.port}`, { "sim-lab": { username: "sim-key", password: "sim-secret-0123456789", clientId: "sim-key" } }, { qos: 1 });
    try {
      // sample times after the host's start: nothing before it is filled (no filling across a restart)
      const t0 = Math.ceil((Date.now() + 1) / 1000) * 1000;
      for (let i = 0; i < 4; i++) for (const l of loops) await pub.publish(`rg/sim-lab/bench-1/${l.loopSlug}/samples`, JSON.stringify({ t: t0 + i * 1000, sp: 50, pv: 40 + i + l.loopId / 10, mv: 30, mode: "auto" }));
      const end = Date.now() + 5000;
      while (got.length < 8 && Date.now() < end) await new Promise((r) => setTimeout(r, 20));
      const totals = ingest.counters.totals();
      expect(Object.fromEntries(Object.entries(totals.rejected).filter(([, n]) => n > 0))).toEqual({});
      expect(totals.messages).toBe(9);
      expect(got.filter((g) => g.loopId === 2).map((g) => g.pv)).toEqual([40.2, 41.2, 42.2, 43.2]);
      expect(got).toHaveLength(8);
    } finally {
      await pub.close();
      await broker.stop();
    }
  });
});
