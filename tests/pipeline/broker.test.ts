import { afterEach, beforeEach, describe, expect, it } from "vitest";
import mqtt, { type MqttClient } from "mqtt";
import { startBroker, StaticCredentials, type BrokerMessage, type BrokerService } from "@/server/broker";
import { IngestCounters } from "@/server/ingest/counters";
import { ManualClock, credential, testContext } from "./helpers";

// Broker security against docs/architecture.md §5 and the MQTT 3.1.1 standard (OASIS, 2014):
// CONNACK return codes §3.2.2.3, SUBACK failure 0x80 §3.9.3. Real aedes on port 0.

const sample = (t: number) => JSON.stringify({ t, sp: 50, pv: 49, mv: 30, mode: "auto" });

describe("embedded broker", () => {
  let clock: ManualClock;
  let broker: BrokerService;
  let creds: StaticCredentials;
  let counters: IngestCounters;
  let received: BrokerMessage[];
  let clients: MqttClient[];
  let url: string;

  beforeEach(async () => {
    clock = new ManualClock(Date.now());
    creds = new StaticCredentials([
      credential({ keyId: "acme-gw1", secret: "s3cret-acme-gw1", tenantId: 1, tenantSlug: "acme", siteSlug: "north", siteId: 10 }),
      credential({ keyId: "acme-all", secret: "s3cret-acme-all", tenantId: 1, tenantSlug: "acme" }),
      credential({ keyId: "brix-gw1", secret: "s3cret-brix-gw1", tenantId: 2, tenantSlug: "brix", siteSlug: "delta", siteId: 20 }),
      credential({ keyId: "acme-old", secret: "s3cret-acme-old", tenantId: 1, tenantSlug: "acme", revoked: true }),
    ]);
    counters = new IngestCounters();
    broker = await startBroker(testContext(clock), {
      credentials: creds,
      counters,
      host: "127.0.0.1",
      port: 0,
      mqttUrl: null,
      perIp: { points: 1000, durationS: 10 },
    });
    received = [];
    broker.subscribeInternal("rg/+/+/+/samples", (m) => received.push(m));
    clients = [];
    url = `mqtt://127.0.0.1:${broker.address()!.port}`;
  });

  afterEach(async () => {
    await Promise.all(clients.map((c) => c.endAsync(true).catch(() => undefined)));
    await broker.stop();
  });

  async function connect(username: string, password: string, clientId = username): Promise<MqttClient> {
    const c = await mqtt.connectAsync(url, { username, password, clientId, reconnectPeriod: 0, connectTimeout: 5000 });
    clients.push(c);
    return c;
  }

  async function refusedWith(username: string, password: string, clientId = username): Promise<number | string> {
    try {
      const c = await connect(username, password, clientId);
      return `connected as ${c.options.clientId}`;
    } catch (err) {
      return (err as { code?: number }).code ?? String(err);
    }
  }

  const closed = (c: MqttClient) => new Promise<void>((resolve) => (c.connected ? c.once("close", () => resolve()) : resolve()));
  const until = async (cond: () => boolean, ms = 3000) => {
    const end = Date.now() + ms;
    while (!cond() && Date.now() < end) await new Promise((r) => setTimeout(r, 10));
  };

  it("delivers a device's telemetry in-process with its identity", async () => {
    const c = await connect("acme-gw1", "s3cret-acme-gw1");
    await c.publishAsync("rg/acme/north/fic-101/samples", sample(1), { qos: 1 });
    await until(() => received.length === 1);
    expect(received).toHaveLength(1);
    expect(received[0]!.device).toMatchObject({ key: "acme-gw1", tenantId: 1, tenantSlug: "acme", siteSlug: "north" });
    expect(received[0]!.payload.toString()).toBe(sample(1));
  });

  it("refuses a wrong secret, an unknown key, a revoked key and no credentials with CONNACK 4", async () => {
    expect(await refusedWith("acme-gw1", "wrong")).toBe(4);
    expect(await refusedWith("nobody", "x")).toBe(4);
    expect(await refusedWith("acme-old", "s3cret-acme-old")).toBe(4);
    expect(await refusedWith("", "")).toBe(4);
    expect(counters.snapshot(1).find((d) => d.device === "acme-gw1")?.rejected.unauthorised).toBe(1);
  });

  it("binds the MQTT client id to the credential (CONNACK 2 otherwise), so no device can evict another", async () => {
    expect(await refusedWith("acme-gw1", "s3cret-acme-gw1", "brix-gw1")).toBe(2);
    expect(await refusedWith("acme-gw1", "s3cret-acme-gw1", "acme-gw1x")).toBe(2);
    const b = await connect("brix-gw1", "s3cret-brix-gw1");
    const a = await connect("acme-gw1", "s3cret-acme-gw1", "acme-gw1:line-2");
    expect(a.connected && b.connected).toBe(true);
  });

  it("closes a device that publishes under another tenant, and delivers nothing", async () => {
    const c = await connect("acme-gw1", "s3cret-acme-gw1");
    const gone = closed(c);
    c.publish("rg/brix/delta/fic-101/samples", sample(1), { qos: 0 });
    await gone;
    expect(received).toHaveLength(0);
    expect(counters.snapshot(1).find((d) => d.device === "acme-gw1")?.rejected["wrong-tenant"]).toBe(1);
    expect(counters.snapshot(2)).toEqual([]);
  });

  it("keeps a site-bound credential to its site; a tenant-wide one may use any site of its tenant", async () => {
    const wide = await connect("acme-all", "s3cret-acme-all");
    await wide.publishAsync("rg/acme/south/tic-7/samples", sample(1), { qos: 1 });
    await until(() => received.length === 1);
    expect(received.map((m) => m.topic)).toEqual(["rg/acme/south/tic-7/samples"]);

    const bound = await connect("acme-gw1", "s3cret-acme-gw1");
    const gone = closed(bound);
    bound.publish("rg/acme/south/tic-7/samples", sample(2), { qos: 0 });
    await gone;
    expect(received).toHaveLength(1);
  });

  it("refuses retained messages, $ topics and topics outside the contract", async () => {
    for (const [topic, retain, reason] of [
      ["rg/acme/north/fic-101/samples", true, "retained"],
      ["$SYS/anything", false, "bad-topic"],
      ["rg/acme/north/fic-101/config", false, "bad-topic"],
    ] as const) {
      const c = await connect("acme-gw1", "s3cret-acme-gw1");
      const gone = closed(c);
      c.publish(topic, sample(1), { qos: 0, retain });
      await gone;
      await c.endAsync(true);
      expect(counters.snapshot(1)[0]!.rejected[reason]).toBeGreaterThanOrEqual(1);
    }
    expect(received).toHaveLength(0);
  });

  it("denies every subscription with SUBACK 0x80 and forwards nothing to devices", async () => {
    const c = await connect("acme-all", "s3cret-acme-all");
    // mqtt.js turns a 0x80 grant into a rejected promise carrying the SUBACK.
    const err = await c.subscribeAsync("rg/#", { qos: 0 }).then(() => null, (e: { packet?: { granted?: number[] } }) => e);
    expect(err?.packet?.granted).toEqual([128]);
    let got = 0;
    c.on("message", () => got++);
    const p = await connect("acme-gw1", "s3cret-acme-gw1");
    await p.publishAsync("rg/acme/north/fic-101/samples", sample(1), { qos: 1 });
    await until(() => received.length === 1);
    await new Promise((r) => setTimeout(r, 100));
    expect(got).toBe(0);
  });

  it("drops a connection as soon as a packet's header announces more than 64 KiB (+ topic room)", async () => {
    const c = await connect("acme-gw1", "s3cret-acme-gw1");
    const gone = closed(c);
    c.publish("rg/acme/north/fic-101/samples", Buffer.alloc(200 * 1024, 0x20), { qos: 0 });
    await gone;
    expect(received).toHaveLength(0);
    expect(counters.snapshot(1)[0]!.rejected["too-large"]).toBe(1);
  });

  it("drops a connected device within one sweep after its credential is revoked", async () => {
    const c = await connect("acme-gw1", "s3cret-acme-gw1");
    const gone = closed(c);
    creds.revoke("acme-gw1");
    clock.advance(6_000); // past the 5 s cache TTL; the sweep runs every 5 s
    await gone;
    expect(c.connected).toBe(false);
    expect(await refusedWith("acme-gw1", "s3cret-acme-gw1")).toBe(4);
  });
});

describe("connection rate limits", () => {
  it("refuses CONNECT attempts beyond the per-key budget with CONNACK 3, even with the right secret", async () => {
    const clock = new ManualClock(Date.now());
    const creds = new StaticCredentials([credential({ keyId: "acme-gw1", secret: "good", tenantId: 1, tenantSlug: "acme" })]);
    const broker = await startBroker(testContext(clock), {
      credentials: creds,
      host: "127.0.0.1",
      port: 0,
      mqttUrl: null,
      perKey: { points: 3, durationS: 60 },
    });
    const url = `mqtt://127.0.0.1:${broker.address()!.port}`;
    const codes: (number | string)[] = [];
    try {
      for (const password of ["bad", "bad", "bad", "good"]) {
        try {
          const c = await mqtt.connectAsync(url, { username: "acme-gw1", password, clientId: "acme-gw1", reconnectPeriod: 0 });
          codes.push("ok");
          await c.endAsync(true);
        } catch (err) {
          codes.push((err as { code?: number }).code ?? "?");
        }
      }
    } finally {
      await broker.stop();
    }
    expect(codes).toEqual([4, 4, 4, 3]);
  });
});

describe("connection rate limits per source address", () => {
  it("refuses CONNECT attempts beyond the per-address budget", async () => {
    const clock = new ManualClock(Date.now());
    const creds = new StaticCredentials([credential({ keyId: "acme-gw1", secret: "good", tenantId: 1, tenantSlug: "acme" })]);
    const broker = await startBroker(testContext(clock), { credentials: creds, host: "127.0.0.1", port: 0, mqttUrl: null, perIp: { points: 2, durationS: 60 } });
    const url = `mqtt://127.0.0.1:${broker.address()!.port}`;
    const outcomes: string[] = [];
    try {
      for (let i = 0; i < 3; i++) {
        // A refused CONNECT is closed without CONNACK (MQTT 3.1.1 §3.1.4 allows closing the connection).
        const c = mqtt.connect(url, { username: "acme-gw1", password: "good", clientId: `acme-gw1:${i}`, reconnectPeriod: 0, connectTimeout: 3000 });
        outcomes.push(
          await new Promise<string>((resolve) => {
            c.once("connect", () => resolve("connected"));
            c.once("close", () => resolve("refused"));
            c.once("error", () => resolve("refused"));
          }),
        );
        await c.endAsync(true);
      }
    } finally {
      await broker.stop();
    }
    expect(outcomes).toEqual(["connected", "connected", "refused"]);
    expect(((await broker.health()).detail as { refusals: { rateLimited: number } }).refusals.rateLimited).toBe(1);
  });
});

describe("external broker (MQTT_URL)", () => {
  it("subscribes to rg/+/+/+/samples on the external broker and delivers messages in-process", async () => {
    // A plain aedes on port 0 stands in for the external broker (e.g. Debian's mosquitto).
    const { Aedes } = await import("aedes");
    const net = await import("node:net");
    const external = await Aedes.createBroker();
    const server = net.createServer(external.handle);
    await new Promise<void>((r) => server.listen(0, "127.0.0.1", () => r()));
    const port = (server.address() as { port: number }).port;
    const clock = new ManualClock(Date.now());
    const svc = await startBroker(testContext(clock), { credentials: new StaticCredentials(), mqttUrl: `mqtt://127.0.0.1:${port}` });
    const got: BrokerMessage[] = [];
    svc.subscribeInternal("rg/+/+/+/samples", (m) => got.push(m));
    const pub = await mqtt.connectAsync(`mqtt://127.0.0.1:${port}`, { clientId: "plant-gw", reconnectPeriod: 0 });
    try {
      expect(svc.broker).toBeNull();
      const end = Date.now() + 5000;
      while (got.length === 0 && Date.now() < end) {
        await pub.publishAsync("rg/acme/north/fic-101/samples", sample(1), { qos: 1 });
        await pub.publishAsync("rg/acme/north/fic-101/other", sample(1), { qos: 0 });
        await new Promise((r) => setTimeout(r, 50));
      }
      expect(got.length).toBeGreaterThan(0);
      expect(got.every((m) => m.topic === "rg/acme/north/fic-101/samples" && m.device.key === "(external broker)")).toBe(true);
      expect((await svc.health()).status).toBe("ok");
    } finally {
      await pub.endAsync(true);
      await svc.stop();
      await new Promise<void>((r) => external.close(() => r()));
      await new Promise<void>((r) => server.close(() => r()));
    }
  });
});
