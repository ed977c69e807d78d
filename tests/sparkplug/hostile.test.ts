/**
 * 10,000 hostile Sparkplug B payloads against the running pipeline: truncated protobuf, garbage,
 * values in the wrong protobuf field for their datatype, array datatypes and oversized metric
 * lists, NaN/Infinity/null values, data before a birth, bad topics. Every one is refused with a
 * counted reason (or, for NaN, its samples are), nothing throws, no tracker figure turns
 * non-finite, and the gateway's good data is still taken afterwards. Valid payloads come from
 * python3-protobuf and sparkplug_b.proto (encode.py); the mutations are made here with a seeded
 * generator, so a run is repeatable.
 */
import mqtt from "mqtt";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { bindSparkplugGroup, saveSparkplugMapping } from "@/lib/data/sparkplug";
import type { TenantContext } from "@/lib/domain/types";
import { EXTERNAL_BROKER } from "@/server/broker";
import { startPipeline, type PipelineService } from "@/server/pipeline";
import { createPipelineFixture, type PipelineTenant } from "../pipeline/fixture";
import { ManualClock, testContext } from "../pipeline/helpers";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { DT, encodeWithPython, type PayloadSpec } from "./encode";
import { mulberry32 } from "../helpers/seeded-random";

let db: TestDatabase;
let a: PipelineTenant;
let p: PipelineService;
const clock = new ManualClock(Math.floor((Date.now() - 3_600_000) / 1000) * 1000);
const GROUP = "hostile.g";
const base = `spBv1.0/${GROUP}`;

beforeAll(async () => {
  db = await createTestDatabase("sph", { asDefault: true });
  ({ a } = await createPipelineFixture(db.models));
  const u = await db.models.User.create({ email: "admin@hostile.example", name: "Admin", passwordHash: "x" });
  await db.models.Membership.create({ userId: u.id, tenantId: a.id, role: "admin" });
  const ctx: TenantContext = { userId: u.id, email: "admin@hostile.example", name: "Admin", tenantId: a.id, tenantSlug: a.slug, tenantName: a.slug, role: "admin" };
  await bindSparkplugGroup(ctx, { groupId: GROUP });
  p = await startPipeline(testContext(clock), { sequelize: db.sequelize, broker: { host: "127.0.0.1", port: 0, mqttUrl: null }, history: { partitionEveryMs: 0 } });
  const t = clock.now();
  const [nb, dbirth] = encodeWithPython([
    { timestamp: t, seq: 0, metrics: [{ name: "bdSeq", datatype: DT.UInt64, value: 0 }] },
    { timestamp: t, seq: 1, metrics: [{ name: "SP", alias: 1, datatype: DT.Double, value: 50 }, { name: "PV", alias: 2, datatype: DT.Double, value: 50 }, { name: "MV", alias: 3, datatype: DT.Double, value: 40 }] },
  ]);
  const ext = { device: EXTERNAL_BROKER, dup: false, retain: false };
  p.sparkplug.handle({ topic: `${base}/NBIRTH/e1`, payload: nb!, ...ext });
  p.sparkplug.handle({ topic: `${base}/DBIRTH/e1/d1`, payload: dbirth!, ...ext });
  await p.sparkplug.flush();
  await saveSparkplugMapping(ctx, { loopId: a.loopId, groupId: GROUP, edgeNode: "e1", device: "d1", sp: "SP", pv: "PV", mv: "MV", mode: null });
  await p.reloadSparkplug();
});
afterAll(async () => {
  await p?.stop();
  await db?.drop();
});

// over every tenant: a topic under a group no tenant owns is counted, but under no tenant
const rejectedTotal = () => Object.values(p.ingest.counters.totals().rejected).reduce((x, y) => x + y, 0);

describe("hostile Sparkplug B payloads", () => {
  it("refuses 10,000 of them with counted reasons, and nothing crashes", async () => {
    const rnd = mulberry32(20261202);
    const int = (n: number) => Math.floor(rnd() * n);
    // valid payloads to mutate, and hostile ones python encodes whole
    const specs: PayloadSpec[] = [];
    const kinds: string[] = [];
    for (let i = 0; i < 2000; i++) {
      const t = clock.now() + i;
      const k = i % 8;
      if (k < 3) {
        kinds.push("truncate");
        specs.push({ timestamp: t, seq: 2 + (i % 200), metrics: [{ alias: 2, timestamp: t, value: 50 + rnd(), field: "double_value" }, { alias: 3, timestamp: t, value: 40, field: "double_value" }] });
      } else if (k === 3) {
        kinds.push("wrong-type");
        const field = ["string_value", "boolean_value", "bytes_value", "int_value"][int(4)]!;
        const value = field === "string_value" ? "fifty" : field === "boolean_value" ? true : field === "bytes_value" ? "00ff" : 7;
        specs.push({ timestamp: t, seq: 0, metrics: [{ alias: 1 + int(3), timestamp: t, value, field }] });
      } else if (k === 4) {
        kinds.push("array");
        // a DoubleArray (31) of 7,000 values as bytes, in place of a Double
        specs.push({ timestamp: t, seq: 0, metrics: [{ alias: 2, timestamp: t, datatype: 31, value: "00".repeat(8 * 7000), field: "bytes_value" }] });
      } else if (k === 5) {
        kinds.push("many-metrics");
        specs.push({ timestamp: t, seq: 0, metrics: Array.from({ length: 2500 }, () => ({ alias: 2, value: 1, field: "double_value" })) });
      } else if (k === 6) {
        kinds.push("non-finite");
        specs.push({ timestamp: t, seq: 0, metrics: [{ alias: 2, timestamp: t, value: ["nan", "inf", "-inf"][int(3)] as unknown as number, field: "double_value" }] });
      } else {
        kinds.push("no-birth");
        specs.push({ timestamp: t, seq: 0, metrics: [{ alias: 2, timestamp: t, value: 1, field: "double_value" }] });
      }
    }
    const encoded = encodeWithPython(specs);
    const msgs: { topic: string; payload: Buffer; kind: string }[] = [];
    for (let n = 0; n < 10_000; n++) {
      const i = n % encoded.length;
      const src = encoded[i]!;
      let kind = kinds[i]!;
      let payload = src;
      let topic = `${base}/DDATA/e1/d1`;
      if (kind === "truncate") {
        const r = rnd();
        if (r < 0.7) payload = src.subarray(0, 1 + int(src.length - 1));
        else if (r < 0.9) {
          kind = "garbage";
          payload = Buffer.from(Array.from({ length: 1 + int(64) }, () => int(256)));
        } else {
          kind = "bad-topic";
          topic = [`${base}/DDATA/e1`, `${base}/NBIRTH/e1/d1`, "spBv1.0/hostile g/DDATA/e1/d1", `${base}/XDATA/e1/d1`][int(4)]!;
        }
      }
      if (kind === "no-birth") topic = `${base}/DDATA/e1/unknown-device`;
      msgs.push({ topic, payload, kind });
    }

    const uncounted: Record<string, number> = {};
    const trackerBefore = p.registry.get(a.loopId)!.current.samples;
    for (const m of msgs) {
      const before = rejectedTotal();
      clock.advance(1);
      expect(() => p.sparkplug.handle({ topic: m.topic, payload: m.payload, device: EXTERNAL_BROKER, dup: false, retain: false })).not.toThrow();
      if (m.kind !== "non-finite" && rejectedTotal() === before) uncounted[m.kind] = (uncounted[m.kind] ?? 0) + 1;
    }
    // every hostile message but the NaN ones (whose samples are refused below) gave a counted reason
    expect(uncounted).toEqual({});
    const reasons = p.ingest.counters.totals(a.id).rejected;
    for (const r of ["sp-bad-payload", "sp-too-many-metrics", "sp-bad-metric", "sp-seq-gap", "sp-no-birth", "bad-topic", "non-finite"] as const) expect(reasons[r], r).toBeGreaterThan(0);
    expect(p.ingest.counters.totals().rejected["sp-unbound-group"]).toBeGreaterThan(0);

    // the tracker saw only finite samples, and its figures are finite or null
    const st = p.registry.get(a.loopId)!.current;
    expect(st.samples).toBeGreaterThanOrEqual(trackerBefore);
    for (const v of [st.spectralRadius, st.decayRatio, st.last?.pv, st.last?.sp, st.last?.mv]) if (v !== null && v !== undefined) expect(Number.isFinite(v)).toBe(true);

    // through the real broker too: the connection may be dropped, the server is not
    const gw = await mqtt.connectAsync(`mqtt://127.0.0.1:${p.broker.address()!.port}`, { username: a.device.keyId, password: a.device.secret, clientId: a.device.clientId, reconnectPeriod: 0 });
    for (const m of msgs.slice(0, 300)) gw.publish(m.topic, m.payload, { qos: 0 });
    await new Promise((r) => setTimeout(r, 500));
    gw.end(true);
    expect((await p.health()).status).not.toBe("down");

    // the gateway's good data is still taken: a fresh birth, then a PV by alias
    clock.advance(5000);
    const t = clock.now();
    const [nb, dbirth, dd] = encodeWithPython([
      { timestamp: t, seq: 0, metrics: [{ name: "bdSeq", datatype: DT.UInt64, value: 1 }] },
      { timestamp: t, seq: 1, metrics: [{ name: "SP", alias: 1, datatype: DT.Double, value: 50 }, { name: "PV", alias: 2, datatype: DT.Double, value: 50 }, { name: "MV", alias: 3, datatype: DT.Double, value: 40 }] },
      { timestamp: t + 3000, seq: 2, metrics: [{ alias: 2, timestamp: t + 3000, value: 51.5, field: "double_value" }] },
    ]);
    const ext = { device: EXTERNAL_BROKER, dup: false, retain: false };
    p.sparkplug.handle({ topic: `${base}/NBIRTH/e1`, payload: nb!, ...ext });
    p.sparkplug.handle({ topic: `${base}/DBIRTH/e1/d1`, payload: dbirth!, ...ext });
    clock.advance(3000);
    const acceptedBefore = p.ingest.counters.totals(a.id).acceptedSamples;
    p.sparkplug.handle({ topic: `${base}/DDATA/e1/d1`, payload: dd!, ...ext });
    expect(p.ingest.counters.totals(a.id).acceptedSamples).toBeGreaterThan(acceptedBefore);
    expect(p.registry.get(a.loopId)!.current.last).toMatchObject({ pv: 51.5, sp: 50, mv: 40 });
  }, 120_000);
});
