/**
 * MQTT over TLS for the embedded broker (server/broker/tls.ts): a gateway connects over TLS with
 * its device credential, verifying the broker's certificate against the pinned self-signed one,
 * and its telemetry arrives; when TLS is required there is no plain listener and plain MQTT to
 * the TLS port fails the handshake. The certificate is made by openssl (Debian) as the demo
 * makes it; its fingerprint is checked against openssl's own (`openssl x509 -fingerprint -sha256`).
 */
import { execFileSync } from "node:child_process";
import fs from "node:fs";
import net from "node:net";
import os from "node:os";
import path from "node:path";
import mqtt, { type MqttClient } from "mqtt";
import { afterAll, afterEach, beforeAll, describe, expect, it } from "vitest";
import { startBroker, StaticCredentials, type BrokerMessage, type BrokerService } from "@/server/broker";
import { certificateFingerprint, ensureSelfSignedPair, tlsListenerFromConfig, tlsModeOf } from "@/server/broker/tls";
import { configSchema } from "@/lib/config";
import { ManualClock, credential, testContext, TEST_PEPPER } from "./helpers";

let dir: string;
let cert: Buffer;
let key: Buffer;
const creds = () => new StaticCredentials([credential({ keyId: "acme-gw1", secret: "s3cret-acme-gw1", tenantId: 1, tenantSlug: "acme", siteSlug: "north", siteId: 10 })]);
const sample = JSON.stringify({ t: 1, sp: 50, pv: 49, mv: 30, mode: "auto" });

beforeAll(() => {
  dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-mqtts-"));
  const pair = ensureSelfSignedPair(dir);
  expect(pair.created).toBe(true);
  expect(ensureSelfSignedPair(dir).created).toBe(false); // made once, then kept
  cert = fs.readFileSync(pair.certPath);
  key = fs.readFileSync(pair.keyPath);
});
afterAll(() => {
  fs.rmSync(dir, { recursive: true, force: true });
});

describe("mqtts", () => {
  let broker: BrokerService;
  const clients: MqttClient[] = [];
  afterEach(async () => {
    await Promise.all(clients.splice(0).map((c) => c.endAsync(true).catch(() => undefined)));
    await broker?.stop();
  });

  it("the demo certificate's fingerprint is the one openssl reports", () => {
    const out = execFileSync("openssl", ["x509", "-noout", "-fingerprint", "-sha256", "-in", path.join(dir, "broker-cert.pem")]).toString();
    expect(out.trim().split("=")[1]).toBe(certificateFingerprint(cert));
    expect((fs.statSync(path.join(dir, "broker-key.pem")).mode & 0o777).toString(8)).toBe("600");
  });

  it("a gateway connects over TLS (certificate verified) and its telemetry arrives with its identity", async () => {
    broker = await startBroker(testContext(new ManualClock(Date.now())), { credentials: creds(), host: "127.0.0.1", port: 0, mqttUrl: null, tls: { mode: "on", host: "127.0.0.1", port: 0, cert, key } });
    const received: BrokerMessage[] = [];
    broker.subscribeInternal("rg/+/+/+/samples", (m) => received.push(m));
    const port = broker.tlsAddress!()!.port;
    const c = await mqtt.connectAsync(`mqtts://localhost:${port}`, { username: "acme-gw1", password: "s3cret-acme-gw1", clientId: "acme-gw1", ca: cert, rejectUnauthorized: true, reconnectPeriod: 0, connectTimeout: 5000 });
    clients.push(c);
    await c.publishAsync("rg/acme/north/fic-101/samples", sample, { qos: 1 });
    for (let i = 0; i < 100 && received.length === 0; i++) await new Promise((r) => setTimeout(r, 10));
    expect(received).toHaveLength(1);
    expect(received[0]!.device).toMatchObject({ key: "acme-gw1", tenantId: 1 });
    // the plain listener still runs in "on" mode (loopback)
    expect(broker.address()).not.toBeNull();
  });

  it("TLS required: no plain listener, plain MQTT to the TLS port is refused, a wrong secret over TLS is refused", async () => {
    broker = await startBroker(testContext(new ManualClock(Date.now())), { credentials: creds(), host: "127.0.0.1", port: 0, mqttUrl: null, tls: { mode: "required", host: "127.0.0.1", port: 0, cert, key } });
    expect(broker.address()).toBeNull();
    const port = broker.tlsAddress!()!.port;
    // mqtt.js's connectAsync does not settle when the server just closes: listen to the events
    const plain = await new Promise<string>((resolve) => {
      const c = mqtt.connect(`mqtt://127.0.0.1:${port}`, { username: "acme-gw1", password: "s3cret-acme-gw1", clientId: "acme-gw1", reconnectPeriod: 0, connectTimeout: 3000 });
      clients.push(c);
      c.once("connect", () => resolve("connected"));
      c.once("close", () => resolve("closed"));
      c.once("error", (e) => resolve(`error: ${e.message}`));
    });
    expect(plain).not.toBe("connected");
    // and a raw TCP client sending an MQTT CONNECT gets no CONNACK: the socket is closed
    const closed = await new Promise<boolean>((resolve) => {
      const s = net.connect(port, "127.0.0.1", () => s.write(Buffer.from([0x10, 0x0c, 0x00, 0x04, 0x4d, 0x51, 0x54, 0x54, 0x04, 0x02, 0x00, 0x3c, 0x00, 0x00])));
      let got = false;
      s.on("data", (d) => (got = got || d[0] === 0x20));
      s.on("close", () => resolve(!got));
      s.on("error", () => undefined);
      setTimeout(() => s.destroy(), 3000);
    });
    expect(closed).toBe(true);
    const wrong = await mqtt
      .connectAsync(`mqtts://localhost:${port}`, { username: "acme-gw1", password: "wrong", clientId: "acme-gw1", ca: cert, reconnectPeriod: 0, connectTimeout: 3000 })
      .then(() => 0)
      .catch((e: { code?: number }) => e.code ?? -1);
    expect(wrong).toBe(4); // CONNACK 4, bad user name or password (MQTT 3.1.1 §3.2.2.3)
  });

  it("configuration: unset is off in tests and on elsewhere; the demo pair is made under the data directory", () => {
    const base = { DEVICE_SECRET_PEPPER: TEST_PEPPER };
    expect(tlsModeOf(configSchema.parse({ ...base, NODE_ENV: "test" }))).toBe("off");
    expect(tlsModeOf(configSchema.parse({ ...base, NODE_ENV: "production" }))).toBe("on");
    const cfg = configSchema.parse({ ...base, NODE_ENV: "test", MQTT_TLS: "required", MQTTS_PORT: "0" });
    const data = fs.mkdtempSync(path.join(os.tmpdir(), "rg-mqtts-data-"));
    try {
      const l = tlsListenerFromConfig(cfg, data)!;
      expect(l.mode).toBe("required");
      expect(l.host).toBe("127.0.0.1");
      expect(fs.existsSync(path.join(data, "mqtt-tls", "broker-cert.pem"))).toBe(true);
      expect(() => tlsListenerFromConfig(configSchema.parse({ ...base, MQTT_TLS: "on", MQTT_TLS_CERT: "only-cert.pem" }), data)).toThrow(/together/);
    } finally {
      fs.rmSync(data, { recursive: true, force: true });
    }
  });
});
