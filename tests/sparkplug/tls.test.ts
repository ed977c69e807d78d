/**
 * Sparkplug B over TLS, end to end: an edge node (NBIRTH, DBIRTH, then DDATA by alias, encoded by
 * python3-protobuf from sparkplug_b.proto, see encode.ts) connects over mqtts, trusting the
 * broker's self-signed certificate by its file, and the mapped loop's tracker takes its samples.
 * (a) the embedded broker with TLS required (server/broker/tls.ts): plain MQTT to it is refused;
 * (b) Debian's mosquitto with only an mqtts listener (tests/setup/mosquitto.ts), the server
 * connected through MQTT_URL=mqtts://... and MQTT_CA_FILE; the group id bound to the tenant
 * attributes the data. Real MariaDB (tests/setup/db.ts). Sparkplug rules as in state.test.ts.
 */
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import mqtt, { type MqttClient } from "mqtt";
import { afterAll, afterEach, beforeAll, describe, expect, it } from "vitest";
import { bindSparkplugGroup, saveSparkplugMapping } from "@/lib/data/sparkplug";
import type { TenantContext } from "@/lib/domain/types";
import { ensureSelfSignedPair } from "@/server/broker/tls";
import { startPipeline, type PipelineService } from "@/server/pipeline";
import { createPipelineFixture, type PipelineTenant } from "../pipeline/fixture";
import { ManualClock, testContext } from "../pipeline/helpers";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { mosquittoAvailable, startMosquitto } from "../setup/mosquitto";
import { encodeWithPython } from "./encode";
import { base, births, createAdmin, dataByAlias, GROUP, mapping, until } from "./gateway";

let db: TestDatabase;
let a: PipelineTenant;
let adminA: TenantContext;
let dir: string;
let certPath: string;
let cert: Buffer;
let key: Buffer;
// One clock for the file: the second pipeline resumes from the loop state the first one stored.
const clock = new ManualClock(Math.floor((Date.now() - 2 * 3_600_000) / 60_000) * 60_000);
const stops: (() => Promise<unknown>)[] = [];

beforeAll(async () => {
  db = await createTestDatabase("sptls", { asDefault: true });
  ({ a } = await createPipelineFixture(db.models));
  adminA = await createAdmin(db, a);
  await bindSparkplugGroup(adminA, { groupId: GROUP, reason: "north plant gateway over mqtts" });
  dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-sptls-"));
  const pair = ensureSelfSignedPair(dir);
  certPath = pair.certPath;
  cert = fs.readFileSync(pair.certPath);
  key = fs.readFileSync(pair.keyPath);
});
afterEach(async () => {
  while (stops.length) await stops.pop()!().catch(() => undefined);
});
afterAll(async () => {
  if (dir) fs.rmSync(dir, { recursive: true, force: true });
  await db?.drop();
});

const accepted = (p: PipelineService) => p.ingest.counters.totals(a.id).acceptedSamples;
const rejectedTotal = (p: PipelineService) => Object.values(p.ingest.counters.totals(a.id).rejected).reduce((x, y) => x + y, 0);

/** The edge node over mqtts, trusting only the certificate read from its file. */
async function edgeNode(url: string, caFile: string): Promise<MqttClient> {
  const c = await mqtt.connectAsync(url, { username: a.device.keyId, password: a.device.secret, clientId: a.device.clientId, ca: fs.readFileSync(caFile), rejectUnauthorized: true, reconnectPeriod: 0, connectTimeout: 5000 });
  stops.push(() => c.endAsync(true));
  return c;
}

/** What happens to a plain MQTT client pointed at a TLS-only port (mqtt.js's connectAsync may not settle on a bare close). */
function connectPlain(port: number): Promise<string> {
  return new Promise<string>((resolve) => {
    const c = mqtt.connect(`mqtt://127.0.0.1:${port}`, { username: a.device.keyId, password: a.device.secret, clientId: "plain-edge", reconnectPeriod: 0, connectTimeout: 3000 });
    stops.push(() => c.endAsync(true));
    c.once("connect", () => resolve("connected"));
    c.once("close", () => resolve("closed"));
    c.once("error", (e) => resolve(`error: ${e.message}`));
  });
}

/** Births, then `n` seconds of DDATA by alias, one message a second; returns the samples sent. */
async function runEdgeNode(c: MqttClient, p: PipelineService, bdSeq: number, n: number) {
  const [nb, db1] = encodeWithPython(births(bdSeq, clock.now()));
  await c.publishAsync(`${base}/NBIRTH/edge-1`, nb!, { qos: 1 });
  await c.publishAsync(`${base}/DBIRTH/edge-1/plc-1`, db1!, { qos: 1 });
  await until(() => p.sparkplug.nodes.find(GROUP, "edge-1", "plc-1")?.bdSeq === bdSeq, 10_000);
  expect(p.sparkplug.nodes.find(GROUP, "edge-1", "plc-1")?.bdSeq).toBe(bdSeq);
  const { specs, sent } = dataByAlias(clock.now(), n);
  const before = accepted(p);
  for (const buf of encodeWithPython(specs)) {
    clock.advance(1000);
    await c.publishAsync(`${base}/DDATA/edge-1/plc-1`, buf, { qos: 1 });
  }
  await until(() => accepted(p) - before >= n, 10_000);
  return { sent, before };
}

describe("Sparkplug B over TLS", () => {
  it("embedded broker, TLS required: the edge node over mqtts reaches the mapped loop's tracker; over plain MQTT it is refused", async () => {
    const p = await startPipeline(testContext(clock), {
      sequelize: db.sequelize,
      broker: { host: "127.0.0.1", port: 0, mqttUrl: null, tls: { mode: "required", host: "127.0.0.1", port: 0, cert, key } },
      history: { partitionEveryMs: 0 },
    });
    stops.push(() => p.stop());
    expect(p.broker.address()).toBeNull(); // no plain listener at all
    const port = p.broker.tlsAddress!()!.port;
    expect(await connectPlain(port)).not.toBe("connected");

    const c = await edgeNode(`mqtts://localhost:${port}`, certPath);
    // the mapping is checked against the device's last birth, so it is saved after the first births
    const [nb, db1] = encodeWithPython(births(0, clock.now()));
    await c.publishAsync(`${base}/NBIRTH/edge-1`, nb!, { qos: 1 });
    await c.publishAsync(`${base}/DBIRTH/edge-1/plc-1`, db1!, { qos: 1 });
    await until(() => p.sparkplug.nodes.find(GROUP, "edge-1", "plc-1") !== null);
    await p.sparkplug.flush();
    await saveSparkplugMapping(adminA, { ...mapping, loopId: a.loopId, reason: "commissioning over mqtts" });
    await p.reloadSparkplug();

    const { sent, before } = await runEdgeNode(c, p, 1, 60);
    expect(accepted(p) - before).toBe(60);
    const tr = p.registry.get(a.loopId)!.current;
    expect(tr.last).toMatchObject({ t: sent[59]!.t, pv: sent[59]!.pv, mv: sent[59]!.mv, sp: sent[59]!.sp, mode: "auto" });
    expect(tr.samples).toBeGreaterThanOrEqual(60);
    expect(rejectedTotal(p)).toBe(0);
  });
});

const INGEST = { username: "rimguard-ingest", password: "ingest-pw-0123456789" };

describe.skipIf(!mosquittoAvailable())("Sparkplug B over TLS through Debian mosquitto (MQTT_URL)", () => {
  it("mqtts only: the server verifies the broker by MQTT_CA_FILE, the edge node's data reaches the tracker, attributed by the bound group", async () => {
    const m = await startMosquitto({
      tlsOnly: true,
      users: [
        { ...INGEST, acl: ["topic read rg/+/+/+/samples", "topic read spBv1.0/#"] },
        { username: a.device.keyId, password: a.device.secret, acl: [`topic write ${base}/#`] },
      ],
    });
    stops.push(() => m.stop());
    expect(m.plainUrl).toBeNull();
    expect(await connectPlain(m.tlsPort)).not.toBe("connected");

    clock.advance(60_000);
    const p = await startPipeline(testContext(clock, { MQTT_USERNAME: INGEST.username, MQTT_PASSWORD: INGEST.password, MQTT_CA_FILE: m.certPath }), {
      sequelize: db.sequelize,
      broker: { mqttUrl: m.tlsUrl },
      history: { partitionEveryMs: 0 },
    });
    stops.push(() => p.stop());
    expect(p.broker.broker).toBeNull();
    // both internal subscriptions (JSON telemetry and spBv1.0/#) are in place before the node speaks
    const subscriptions = async () => ((await p.broker.health()).detail as { subscriptions?: string[] }).subscriptions ?? [];
    for (let i = 0; i < 250 && !(await subscriptions()).includes("spBv1.0/#"); i++) await new Promise((r) => setTimeout(r, 20));
    expect(await subscriptions()).toContain("spBv1.0/#");

    const c = await edgeNode(m.tlsUrl, m.certPath);
    const { sent, before } = await runEdgeNode(c, p, 2, 30);
    expect(accepted(p) - before).toBe(30);
    expect(p.registry.get(a.loopId)!.current.last).toMatchObject({ t: sent[29]!.t, pv: sent[29]!.pv, mv: sent[29]!.mv, sp: sent[29]!.sp });
    expect(rejectedTotal(p)).toBe(0);
    expect((await p.health()).detail).toMatchObject({ broker: { status: "ok", detail: { mode: "external", connected: true } } });
  });
});
