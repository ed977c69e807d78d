/**
 * The telemetry path behind an external broker (MQTT_URL, server/broker/external.ts) against
 * Debian's `mosquitto` (tests/setup/mosquitto.ts): a private broker on loopback with a password
 * file, an ACL per device and a self-signed certificate. A gateway publishes JSON telemetry
 * (docs/architecture.md §5) and the loop's tracker follows it, over plain MQTT and over mqtts
 * (certificate verified against the broker's own file, never skipped); with only mqtts offered a
 * plain client is refused; one tenant's gateway cannot publish into another tenant's topics,
 * because the broker's ACL refuses it (Rimguard itself cannot tell who published: see
 * server/broker/external.ts). Skipped where mosquitto is not installed.
 */
import mqtt, { type MqttClient } from "mqtt";
import { afterAll, afterEach, beforeAll, describe, expect, it } from "vitest";
import { startBroker, StaticCredentials } from "@/server/broker";
import { startPipeline } from "@/server/pipeline";
import type { SampleDto } from "@/lib/domain/types";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { mosquittoAvailable, startMosquitto, type MosquittoUser } from "../setup/mosquitto";
import { createPipelineFixture, PiLoop, type PipelineTenant } from "./fixture";
import { ManualClock, testContext } from "./helpers";

const INGEST = { username: "rimguard-ingest", password: "ingest-pw-0123456789" };
let db: TestDatabase;
let a: PipelineTenant;
let b: PipelineTenant;
let users: MosquittoUser[];
// One clock for the file: each pipeline resumes from the loop states the one before stored, so time only moves on.
const clock = new ManualClock(Math.floor(Date.now() / 1000) * 1000 - 6 * 3_600_000);

const topic = (t: PipelineTenant) => `rg/${t.slug}/${t.siteSlug}/fic-101/samples`;
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
async function waitFor(what: string, ok: () => boolean | Promise<boolean>, ms = 10_000): Promise<void> {
  const end = Date.now() + ms;
  while (!(await ok())) {
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`);
    await sleep(20);
  }
}

beforeAll(async () => {
  db = await createTestDatabase("extb");
  ({ a, b } = await createPipelineFixture(db.models));
  // mosquitto's ACL: each device may write its own tenant's site only; the ingest user reads telemetry
  users = [
    { ...INGEST, acl: ["topic read rg/+/+/+/samples"] },
    ...[a, b].map((t) => ({ username: t.device.keyId, password: t.device.secret, acl: [`topic write rg/${t.slug}/${t.siteSlug}/+/samples`] })),
  ];
});
afterAll(async () => {
  await db?.drop();
});

describe.skipIf(!mosquittoAvailable())("external broker: Debian mosquitto through MQTT_URL", () => {
  const stops: (() => Promise<void>)[] = [];
  afterEach(async () => {
    while (stops.length) await stops.pop()!().catch(() => undefined);
  });
  const broker = async (tlsOnly = false) => {
    const m = await startMosquitto({ users, tlsOnly });
    stops.push(() => m.stop());
    return m;
  };
  const pipeline = async (url: string, env: Record<string, string> = {}) => {
    const p = await startPipeline(testContext(clock, { MQTT_USERNAME: INGEST.username, MQTT_PASSWORD: INGEST.password, ...env }), {
      sequelize: db.sequelize,
      broker: { mqttUrl: url },
      history: { partitionEveryMs: 0 },
    });
    stops.push(() => p.stop());
    await waitFor("the ingest subscription", async () => {
      const h = await p.broker.health();
      return ((h.detail as { subscriptions?: string[] }).subscriptions ?? []).length > 0;
    });
    return p;
  };
  const gateway = async (url: string, t: PipelineTenant, extra: mqtt.IClientOptions = {}) => {
    const c = await mqtt.connectAsync(url, { username: t.device.keyId, password: t.device.secret, clientId: t.device.clientId, reconnectPeriod: 0, connectTimeout: 5000, ...extra });
    stops.push(() => c.endAsync(true));
    return c;
  };
  /** Publish `n` seconds of the plant's telemetry in messages of 10 samples (QoS 1); returns what was sent. */
  const publishPlant = async (c: MqttClient, t: PipelineTenant, n: number): Promise<SampleDto[]> => {
    const plant = new PiLoop();
    const sent: SampleDto[] = [];
    for (let i = 0; i < n; i += 10) {
      const batch: SampleDto[] = [];
      for (let k = 0; k < 10; k++) {
        clock.advance(1000);
        batch.push(plant.next(clock.now()));
      }
      await c.publishAsync(topic(t), JSON.stringify(batch), { qos: 1 });
      sent.push(...batch);
    }
    return sent;
  };

  it("plain MQTT: a gateway's JSON telemetry reaches the loop's tracker, counted for its tenant", async () => {
    const m = await broker();
    const p = await pipeline(m.plainUrl!);
    expect(p.broker.broker).toBeNull();
    const sent = await publishPlant(await gateway(m.plainUrl!, a), a, 300);
    await waitFor("300 samples at the tracker", () => (p.registry.get(a.loopId)?.current.samples ?? 0) >= sent.length);
    const state = p.registry.get(a.loopId)!.current;
    expect(state.samples).toBe(sent.length);
    expect(state.last?.t).toBe(sent.at(-1)!.t);
    expect(Number.isFinite(state.spectralRadius)).toBe(true);
    expect(p.ingest.counters.totals(a.id)).toMatchObject({ acceptedSamples: 300 });
    const devices = p.ingestDiagnostics(a.id).devices.map((d) => d.device);
    expect(devices).toEqual([`(external broker) ${a.slug}/${a.siteSlug}`]);
    expect((await p.health()).detail).toMatchObject({ broker: { status: "ok", detail: { mode: "external", connected: true } } });
  });

  it("mqtts: server and gateway verify the broker's self-signed certificate by its file; telemetry arrives", async () => {
    const m = await broker();
    const p = await pipeline(m.tlsUrl, { MQTT_CA_FILE: m.certPath });
    const c = await gateway(m.tlsUrl, b, { ca: m.cert, rejectUnauthorized: true });
    const sent = await publishPlant(c, b, 100);
    await waitFor("100 samples accepted", () => p.ingest.counters.totals(b.id).acceptedSamples === sent.length);
    expect(p.registry.get(b.loopId)!.current.last?.t).toBe(sent.at(-1)!.t);
    // without the broker's certificate the TLS handshake fails: verification is on, not skipped
    const untrusted = await mqtt
      .connectAsync(m.tlsUrl, { username: b.device.keyId, password: b.device.secret, clientId: "b-untrusted", reconnectPeriod: 0, connectTimeout: 3000 })
      .then((x) => (stops.push(() => x.endAsync(true)), "connected"))
      .catch((e: Error) => e.message);
    expect(untrusted).toMatch(/self.signed|certificate/i);
  });

  it("mqtts only: no plain listener, plain MQTT to the TLS port gets no CONNACK, the server connects over TLS", async () => {
    const m = await broker(true);
    expect(m.plainUrl).toBeNull();
    const plain = await new Promise<string>((resolve) => {
      const c = mqtt.connect(`mqtt://127.0.0.1:${m.tlsPort}`, { username: a.device.keyId, password: a.device.secret, clientId: "a-plain", reconnectPeriod: 0, connectTimeout: 3000 });
      stops.push(() => c.endAsync(true));
      c.once("connect", () => resolve("connected"));
      c.once("close", () => resolve("closed"));
      c.once("error", (e) => resolve(`error: ${e.message}`));
    });
    expect(plain).not.toBe("connected");
    const p = await pipeline(m.tlsUrl, { MQTT_CA_FILE: m.certPath });
    const sent = await publishPlant(await gateway(m.tlsUrl, a, { ca: m.cert }), a, 20);
    await waitFor("20 samples accepted", () => p.ingest.counters.totals(a.id).acceptedSamples === sent.length);
    expect(p.registry.get(a.loopId)!.current.last?.t).toBe(sent.at(-1)!.t);
  });

  it("tenancy: the broker's ACL keeps a gateway out of another tenant's topics; its own topics pass", async () => {
    const m = await broker();
    const p = await pipeline(m.plainUrl!);
    const cb = await gateway(m.plainUrl!, b);
    const before = p.registry.get(a.loopId)!.current.samples;
    const plant = new PiLoop();
    clock.advance(1000);
    // brix's gateway tries acme's loop (mosquitto acknowledges a QoS 1 publish it drops by ACL), then its own
    await cb.publishAsync(topic(a), JSON.stringify(plant.next(clock.now())), { qos: 1 });
    clock.advance(1000);
    await cb.publishAsync(topic(b), JSON.stringify(plant.next(clock.now())), { qos: 1 });
    await waitFor("brix's own sample", () => p.ingest.counters.totals(b.id).acceptedSamples === 1);
    await sleep(200);
    expect(p.ingest.counters.totals(a.id).acceptedSamples).toBe(0);
    expect(p.registry.get(a.loopId)!.current.samples).toBe(before);
    // A retained sample reaches a live subscriber as live (the broker clears the flag, MQTT 3.1.1
    // §3.3.1.3), but its replay to the next subscription carries the flag and is refused.
    const ca = await gateway(m.plainUrl!, a);
    clock.advance(1000);
    await ca.publishAsync(topic(a), JSON.stringify(plant.next(clock.now())), { qos: 1, retain: true });
    await waitFor("the live retained sample", () => p.ingest.counters.totals(a.id).acceptedSamples === 1);
    await p.stop();
    const p2 = await pipeline(m.plainUrl!);
    await waitFor("the replay's rejection", () => (p2.ingest.counters.totals(a.id).rejected["retained"] ?? 0) === 1);
    expect(p2.ingest.counters.totals(a.id).acceptedSamples).toBe(0);
  });
});

describe("external broker: a refused subscription", () => {
  it("SUBACK 0x80 for the telemetry pattern makes the broker service critical and says why", async () => {
    // Mosquitto 2.0 grants any subscription and filters at delivery; brokers that check read
    // access at SUBSCRIBE answer 0x80 (MQTT 3.1.1 §3.9.3). An aedes that refuses stands in for one.
    const { Aedes } = await import("aedes");
    const net = await import("node:net");
    const external = await Aedes.createBroker({ authorizeSubscribe: (_c, _sub, done) => done(null, null) });
    const server = net.createServer(external.handle);
    await new Promise<void>((r) => server.listen(0, "127.0.0.1", () => r()));
    const svc = await startBroker(testContext(clock), { credentials: new StaticCredentials(), mqttUrl: `mqtt://127.0.0.1:${(server.address() as { port: number }).port}` });
    try {
      svc.subscribeInternal("rg/+/+/+/samples", () => undefined);
      await waitFor("the refusal", async () => ((await svc.health()).detail as { refusedSubscriptions: string[] }).refusedSubscriptions.length > 0);
      const h = await svc.health();
      expect(h.status).toBe("critical");
      expect((h.detail as { lastError: string }).lastError).toMatch(/refused the subscription to rg\/\+\/\+\/\+\/samples/);
    } finally {
      await svc.stop();
      await new Promise<void>((r) => external.close(() => r()));
      await new Promise<void>((r) => server.close(() => r()));
    }
  });
});
