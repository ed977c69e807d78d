/**
 * Sparkplug B through the whole pipeline: a gateway on the embedded broker publishes births,
 * report-by-exception data by alias, store-and-forward history and its death (the MQTT will);
 * payloads are encoded by python3-protobuf from sparkplug_b.proto (encode.py), not by the codec
 * the product decodes with. Real MariaDB (tests/setup/db.ts) and aedes on port 0. The Sparkplug
 * rules restate the Eclipse Sparkplug 3.0 specification from memory (see state.test.ts).
 */
import mqtt from "mqtt";
import { QueryTypes } from "sequelize";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { bindSparkplugGroup, saveSparkplugMapping, sparkplugOverview } from "@/lib/data/sparkplug";
import type { TenantContext } from "@/lib/domain/types";
import { startPipeline, type PipelineService } from "@/server/pipeline";
import { createPipelineFixture, type PipelineTenant } from "../pipeline/fixture";
import { ManualClock, testContext } from "../pipeline/helpers";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { DT, encodeWithPython, type PayloadSpec } from "./encode";
import { base, births, createAdmin, dataByAlias, GROUP, mapping, until } from "./gateway";

let db: TestDatabase;
let a: PipelineTenant;
let b: PipelineTenant;
let adminA: TenantContext;
let adminB: TenantContext;
beforeAll(async () => {
  db = await createTestDatabase("spb", { asDefault: true });
  ({ a, b } = await createPipelineFixture(db.models));
  adminA = await createAdmin(db, a);
  adminB = await createAdmin(db, b);
});
afterAll(async () => {
  await db?.drop();
});

const rows = <T extends object>(sql: string, replacements: unknown[] = []) => db.sequelize.query<T>(sql, { replacements, type: QueryTypes.SELECT });
const start = (clock: ManualClock) => startPipeline(testContext(clock), { sequelize: db.sequelize, broker: { host: "127.0.0.1", port: 0, mqttUrl: null }, history: { partitionEveryMs: 0 } });
const connect = (p: PipelineService, t: PipelineTenant, will?: Buffer) =>
  mqtt.connectAsync(`mqtt://127.0.0.1:${p.broker.address()!.port}`, {
    username: t.device.keyId,
    password: t.device.secret,
    clientId: t.device.clientId,
    reconnectPeriod: 0,
    ...(will ? { will: { topic: `${base}/NDEATH/edge-1`, payload: will, qos: 1 as const, retain: false } } : {}),
  });
const rejected = (p: PipelineService, tenantId: number) => p.ingest.counters.totals(tenantId).rejected;
const accepted = (p: PipelineService, tenantId: number) => p.ingest.counters.totals(tenantId).acceptedSamples;

const T0 = Math.floor((Date.now() - 2 * 3_600_000) / 60_000) * 60_000;
describe("Sparkplug B ingest through the broker", () => {
  it("binds a group to one tenant, maps a device after its birth, and takes data by alias into the loop's tracker", async () => {
    const clock = new ManualClock(T0);
    await bindSparkplugGroup(adminA, { groupId: GROUP, reason: "gateway of the north plant" });
    await expect(bindSparkplugGroup(adminB, { groupId: GROUP })).rejects.toMatchObject({ status: 409 });
    const p = await start(clock);
    try {
      const [willDeath] = encodeWithPython([{ metrics: [{ name: "bdSeq", datatype: DT.UInt64, value: 0 }] }]);
      const gw = await connect(p, a, willDeath);
      const [nb, db1] = encodeWithPython(births(0, T0));
      await gw.publishAsync(`${base}/NBIRTH/edge-1`, nb!, { qos: 1 });
      await gw.publishAsync(`${base}/DBIRTH/edge-1/plc-1`, db1!, { qos: 1 });
      await until(() => p.sparkplug.nodes.find(GROUP, "edge-1", "plc-1") !== null);
      await p.sparkplug.flush();

      // the mapping is checked against the device's last birth
      await expect(saveSparkplugMapping(adminA, { ...mapping, loopId: a.loopId, pv: "FIC101/TAGNAME", mv: "FIC101/NOPE" })).rejects.toMatchObject({
        status: 422,
        details: { pv: expect.stringContaining("String"), mv: expect.stringContaining("not in the device's last birth") },
      });
      await expect(saveSparkplugMapping(adminB, { ...mapping, loopId: b.loopId })).rejects.toMatchObject({ status: 422, details: { groupId: expect.any(String) } });
      await saveSparkplugMapping(adminA, { ...mapping, loopId: a.loopId, reason: "commissioning" });
      const log = await rows<{ entity: string; diff: string | object }>("SELECT entity, diff FROM config_changes WHERE tenant_id = ? AND entity LIKE 'sparkplug-%' ORDER BY id", [a.id]);
      expect(log.map((r) => r.entity)).toEqual(["sparkplug-group", "sparkplug-mapping"]);
      expect(JSON.stringify(log[1]!.diff)).toContain("FIC101/PV");
      await p.reloadSparkplug();
      const overview = await sparkplugOverview(adminA);
      expect(overview.sources.map((s) => s.device)).toEqual(["", "plc-1"]);
      expect(overview.mappings).toEqual([expect.objectContaining({ loopId: a.loopId, loopTag: "FIC-101", pv: "FIC101/PV" })]);

      // 120 s of report by exception: PV and MV each second by alias (no name, no datatype), SP only when it moves
      const { specs, sent } = dataByAlias(T0, 120);
      const bufs = encodeWithPython(specs);
      const before = accepted(p, a.id);
      for (const buf of bufs) {
        clock.advance(1000);
        await gw.publishAsync(`${base}/DDATA/edge-1/plc-1`, buf, { qos: 1 });
      }
      await until(() => accepted(p, a.id) - before >= 120);
      // one sample per second on the loop's 1 s grid, values held between changes
      expect(accepted(p, a.id) - before).toBe(120);
      const tr = p.registry.get(a.loopId)!;
      expect(tr.current.last).toMatchObject({ t: sent[119]!.t, pv: sent[119]!.pv, mv: sent[119]!.mv, sp: sent[119]!.sp, mode: "auto" });
      expect(Object.values(rejected(p, a.id)).reduce((x, y) => x + y, 0)).toBe(0);

      // silence is "no change": the tick fills the grid with the held values
      clock.advance(5000);
      expect(accepted(p, a.id) - before).toBe(124); // up to now - 1 s
      expect(tr.current.last).toMatchObject({ t: sent[119]!.t + 4000, pv: sent[119]!.pv });

      // store-and-forward: historical samples go to history at their own times, not to the tracker
      const hist = sent.slice(0, 3).map((s, i) => ({ t: T0 - 600_000 + i * 1000, pv: s.pv }));
      const [hbuf] = encodeWithPython([{ timestamp: clock.now(), seq: 122, metrics: hist.map((h) => ({ alias: 12, timestamp: h.t, value: h.pv, field: "double_value", is_historical: true })) }]);
      const samplesBefore = tr.current.samples;
      await gw.publishAsync(`${base}/DDATA/edge-1/plc-1`, hbuf!, { qos: 1 });
      await until(() => accepted(p, a.id) - before >= 127);
      expect(tr.current.samples).toBe(samplesBefore);
      await p.history.flushNow();
      const stored = await rows<{ t: number; pv_mean: number }>("SELECT t, pv_mean FROM samples_1s WHERE loop_id = ? AND t < ? ORDER BY t", [a.loopId, T0]);
      expect(stored.map((r) => [Number(r.t), r.pv_mean])).toEqual(hist.map((h) => [h.t, h.pv]));

      // a sequence gap and an unknown alias: counted, the source flagged for a rebirth
      const [gap, unknown] = encodeWithPython([
        { timestamp: clock.now(), seq: 130, metrics: [{ alias: 12, timestamp: clock.now(), value: 41, field: "double_value" }] },
        { timestamp: clock.now(), seq: 131, metrics: [{ alias: 77, timestamp: clock.now(), value: 41, field: "double_value" }] },
      ]);
      await gw.publishAsync(`${base}/DDATA/edge-1/plc-1`, gap!, { qos: 1 });
      await gw.publishAsync(`${base}/DDATA/edge-1/plc-1`, unknown!, { qos: 1 });
      await until(() => rejected(p, a.id)["sp-unknown-alias"] === 1);
      expect(rejected(p, a.id)).toMatchObject({ "sp-seq-gap": 1, "sp-unknown-alias": 1 });
      await p.sparkplug.flush();
      const flagged = (await sparkplugOverview(adminA)).sources.map((s) => [s.device, s.needsRebirth]);
      expect(flagged).toEqual([["", "sequence gap: expected 123, got 130"], ["plc-1", "unknown alias 77"]]);

      // another tenant's gateway cannot publish into this group: refused at the broker
      const other = await connect(p, b);
      const [forged] = encodeWithPython([{ timestamp: clock.now(), seq: 132, metrics: [{ alias: 12, value: 99, field: "double_value" }] }]);
      other.publish(`${base}/DDATA/edge-1/plc-1`, forged!, { qos: 0 }); // refused: aedes closes the connection
      await until(() => rejected(p, b.id)["wrong-tenant"] >= 1);
      expect(rejected(p, b.id)["wrong-tenant"]).toBe(1);
      expect(tr.current.last?.pv).not.toBe(99);
      other.end(true);

      // an NDEATH of an older session is ignored; the will of this one makes the loop stale at once
      const [staleDeath] = encodeWithPython([{ metrics: [{ name: "bdSeq", datatype: DT.UInt64, value: 41 }] }]);
      await gw.publishAsync(`${base}/NDEATH/edge-1`, staleDeath!, { qos: 1 });
      await until(() => rejected(p, a.id)["sp-stale-death"] === 1);
      expect(tr.current.trackerState).not.toBe("stale");
      gw.stream.destroy(); // the connection drops: the broker publishes the will (NDEATH, bdSeq 0)
      await until(() => tr.current.trackerState === "stale");
      expect(tr.current).toMatchObject({ trackerState: "stale", stateReason: "Sparkplug NDEATH of edge-1" });
      const n = accepted(p, a.id);
      clock.advance(5000);
      expect(accepted(p, a.id)).toBe(n); // nothing is filled for a dead source
      gw.end(true);
    } finally {
      await p.stop();
    }
  });

  it("restores the last birth after a restart: data by alias between restart and rebirth decodes, the set point held from the birth", async () => {
    const clock = new ManualClock(T0 + 3_600_000);
    let p = await start(clock);
    const t1 = clock.now();
    try {
      const gw = await connect(p, a);
      const bs = births(1, T0).map((s) => ({ ...s, timestamp: t1 }));
      bs[1]!.metrics![0]!.value = 47.5; // the set point, sent only in the birth
      const [nb, db1] = encodeWithPython(bs);
      await gw.publishAsync(`${base}/NBIRTH/edge-1`, nb!, { qos: 1 });
      await gw.publishAsync(`${base}/DBIRTH/edge-1/plc-1`, db1!, { qos: 1 });
      await until(() => p.sparkplug.nodes.find(GROUP, "edge-1", "plc-1")?.bdSeq === 1);
      await gw.endAsync();
    } finally {
      await p.stop();
    }
    const persisted = await rows<{ bd_seq: number; device: string }>("SELECT bd_seq, device FROM sparkplug_births WHERE group_id = ? ORDER BY device", [GROUP]);
    expect(persisted.map((r) => [r.device, Number(r.bd_seq)])).toEqual([["", 1], ["plc-1", 1]]);

    clock.advance(10_000);
    p = await start(clock);
    try {
      const gw = await connect(p, a);
      const specs: PayloadSpec[] = [];
      for (let i = 1; i <= 5; i++) specs.push({ timestamp: clock.now() + i * 1000, seq: 1 + i, metrics: [{ alias: 12, timestamp: clock.now() + i * 1000, value: 45 + i, field: "double_value" }, { alias: 13, timestamp: clock.now() + i * 1000, value: 30, field: "double_value" }] });
      const before = accepted(p, a.id);
      for (const buf of encodeWithPython(specs)) {
        clock.advance(1000);
        await gw.publishAsync(`${base}/DDATA/edge-1/plc-1`, buf, { qos: 1 });
      }
      await until(() => accepted(p, a.id) - before >= 5);
      expect(accepted(p, a.id) - before).toBe(5);
      expect(p.registry.get(a.loopId)!.current.last).toMatchObject({ pv: 50, mv: 30, sp: 47.5, mode: "auto" });
      expect(rejected(p, a.id)["sp-no-birth"]).toBe(0);
      await gw.endAsync();
    } finally {
      await p.stop();
    }
  });
});
