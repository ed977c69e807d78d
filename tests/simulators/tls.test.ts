/**
 * The simulators and an embedded broker that requires TLS (MQTT_TLS=required: no plain listener,
 * server/broker/tls.ts): the simulators connect over mqtts, trusting the broker's self-signed
 * certificate by its file (never by skipping verification), and their telemetry arrives with the
 * device's identity; a certificate they were not told to trust is refused.
 */
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { afterAll, afterEach, describe, expect, it } from "vitest";
import { getConfig } from "@/lib/config";
import { startBroker, StaticCredentials, type BrokerMessage } from "@/server/broker";
import { ensureSelfSignedPair } from "@/server/broker/tls";
import { Bus, systemClock, type ServerContext } from "@/server/context";
import { startSimulators } from "@/server/simulators-process";
import { brokerOf, parseSimulatorOptions } from "@/simulators/options";
import { connectPublisher } from "@/simulators/publisher";
import { credential, testContext, ManualClock } from "../pipeline/helpers";

const root = path.resolve(import.meta.dirname, "../..");
const tmp = fs.mkdtempSync(path.join(os.tmpdir(), "rg-simtls-"));
const { certPath, keyPath } = ensureSelfSignedPair(path.join(tmp, "mqtt-tls"));
const cert = fs.readFileSync(certPath);
const key = fs.readFileSync(keyPath);
const DEVICE = { username: "sim-lab-gw", password: "sim-lab-secret-0123456789", clientId: "rg-sim-tls" };
const stops: (() => Promise<void>)[] = [];
afterEach(async () => {
  while (stops.length) await stops.pop()!().catch(() => undefined);
});
afterAll(() => fs.rmSync(tmp, { recursive: true, force: true }));

async function tlsBroker() {
  const ctx = testContext(new ManualClock(Date.now()));
  const creds = new StaticCredentials([credential({ keyId: DEVICE.username, secret: DEVICE.password, clientId: DEVICE.clientId, tenantId: 7, tenantSlug: "sim-lab" })]);
  const broker = await startBroker(ctx, { credentials: creds, host: "127.0.0.1", port: 0, mqttUrl: null, tls: { mode: "required", host: "127.0.0.1", port: 0, cert, key } });
  stops.push(() => broker.stop());
  const got: BrokerMessage[] = [];
  broker.subscribeInternal("rg/+/+/+/samples", (m) => got.push(m));
  return { port: broker.tlsAddress!()!.port, got, plain: broker.address() };
}

describe("simulators over mqtts", () => {
  it("options: MQTT_TLS=required means mqtts to MQTTS_HOST:MQTTS_PORT trusting the broker's certificate file", () => {
    const base = { NODE_ENV: "test" as const, MQTT_TLS_DIR: tmp };
    expect(brokerOf(getConfig({ ...base, MQTT_TLS: "on" }))).toEqual({ brokerUrl: "mqtt://127.0.0.1:1884", caFile: null });
    expect(brokerOf(getConfig({ ...base, MQTT_TLS: "required", MQTTS_PORT: "9884" }))).toEqual({ brokerUrl: "mqtts://127.0.0.1:9884", caFile: certPath });
    expect(brokerOf(getConfig({ ...base, MQTT_TLS: "required", MQTTS_HOST: "0.0.0.0", MQTT_TLS_CERT: "site.pem" }))).toEqual({ brokerUrl: "mqtts://127.0.0.1:8884", caFile: "site.pem" });
    expect(brokerOf(getConfig({ ...base, MQTT_TLS: "required", MQTT_CA_FILE: "ca.pem" })).caFile).toBe("ca.pem");
    // an external broker is taken as given, with --ca for its certificate
    const o = parseSimulatorOptions(["--broker", "mqtts://broker.example:8883", "--ca", "ca.pem"], { NODE_ENV: "test" }, "demo.json");
    expect([o.brokerUrl, o.caFile]).toEqual(["mqtts://broker.example:8883", "ca.pem"]);
  });

  it("the simulator process publishes over mqtts to a broker that requires TLS", async () => {
    const b = await tlsBroker();
    expect(b.plain).toBeNull(); // no plain listener: plain MQTT could not connect at all
    const cfg = getConfig({ ...process.env, MQTT_TLS: "required", MQTTS_HOST: "127.0.0.1", MQTTS_PORT: String(b.port), MQTT_TLS_DIR: tmp, SIM_SPEEDUP: "20" });
    const ctx: ServerContext = { config: cfg, io: null, bus: new Bus(), clock: systemClock, services: new Map() };
    const svc = await startSimulators(ctx, {
      root,
      args: ["--scenario", path.join(root, "simulators/scenarios/gain-creep.json"), "--no-seed", "--duration", "4", "--batch", "10"],
      env: { SIM_LOCK_DIR: tmp, SIM_DEVICE_CREDENTIALS: JSON.stringify({ "sim-lab": DEVICE }) },
    });
    stops.push(() => svc.stop());
    const deadline = Date.now() + 60_000;
    while (svc.health().status === "ok" && Date.now() < deadline) await new Promise((r) => setTimeout(r, 200));
    expect(svc.health()).toMatchObject({ status: "degraded", detail: { exitCode: 0 } });
    const samples = b.got.filter((m) => m.topic === "rg/sim-lab/bench-1/fic-901/samples");
    expect(samples.length).toBeGreaterThan(3);
    expect(samples.every((m) => m.device.key === DEVICE.username && m.device.tenantId === 7)).toBe(true);
  }, 90_000);

  it("a certificate the simulator was not told to trust is refused (verification stays on)", async () => {
    const b = await tlsBroker();
    const other = ensureSelfSignedPair(path.join(tmp, "other"));
    const url = `mqtts://127.0.0.1:${b.port}`;
    await expect(connectPublisher(url, { "sim-lab": DEVICE }, { ca: fs.readFileSync(other.certPath), connectTimeoutMs: 3000 })).rejects.toThrow(/could not connect.*(self.signed|certificate|signature)/i);
    await expect(connectPublisher(url, { "sim-lab": DEVICE }, { connectTimeoutMs: 3000 })).rejects.toThrow(/could not connect.*(self.signed|certificate)/i);
    const ok = await connectPublisher(url, { "sim-lab": DEVICE }, { ca: cert, connectTimeoutMs: 3000 });
    await ok.close();
  });
});
