/**
 * The simulators as a process: `node --import tsx simulators/index.ts` (what `npm run simulate`
 * and the server's child process run) against an aedes broker on port 0 that checks the device
 * credential, with a scenario of inline loops and --duration so it stops by itself.
 */
import net from "node:net";
import path from "node:path";
import { Aedes } from "aedes";
import { afterEach, describe, expect, it } from "vitest";
import { getConfig } from "@/lib/config";
import { decodePayload, validateSample } from "@/lib/telemetry";
import { Bus, systemClock, type ServerContext } from "@/server/context";
import { startSimulators } from "@/server/simulators-process";

const root = path.resolve(import.meta.dirname, "../..");
const stops: (() => Promise<void>)[] = [];
afterEach(async () => {
  while (stops.length) await stops.pop()!();
});

async function startBroker(): Promise<{ port: number; topics: Map<string, number>; clients: string[] }> {
  const broker = await Aedes.createBroker({
    authenticate: (client, username, password, done) => {
      done(null, username === "demo-key" && password?.toString() === "demo-secret" && client.id === "rg-sim-test");
    },
  });
  const topics = new Map<string, number>();
  const clients: string[] = [];
  broker.on("client", (c) => clients.push(c.id));
  await new Promise<void>((resolve) =>
    broker.subscribe(
      "rg/+/+/+/samples",
      (packet, cb) => {
        const d = decodePayload(packet.payload as Buffer);
        if (d.ok && d.items.every((i) => validateSample(i).ok)) topics.set(packet.topic, (topics.get(packet.topic) ?? 0) + d.items.length);
        cb();
      },
      resolve,
    ),
  );
  const server = net.createServer(broker.handle);
  await new Promise<void>((resolve) => server.listen(0, "127.0.0.1", resolve));
  stops.push(async () => {
    await new Promise<void>((r) => broker.close(() => r()));
    await new Promise<void>((r) => server.close(() => r()));
  });
  return { port: (server.address() as net.AddressInfo).port, topics, clients };
}

describe("simulators process", () => {
  it("publishes the scenario's loops with the device credential and stops by itself after --duration", async () => {
    const b = await startBroker();
    const cfg = getConfig({ ...process.env, MQTT_PORT: String(b.port), MQTT_HOST: "127.0.0.1", SIM_SPEEDUP: "20" });
    const ctx: ServerContext = { config: cfg, io: null, bus: new Bus(), clock: systemClock, services: new Map() };
    const svc = await startSimulators(ctx, {
      root,
      args: ["--scenario", path.join(root, "simulators/scenarios/gain-creep.json"), "--no-seed", "--duration", "4", "--batch", "10"],
      env: { SIM_DEVICE_CREDENTIALS: JSON.stringify({ "sim-lab/bench-1": { username: "demo-key", password: "demo-secret", clientId: "rg-sim-test" } }) },
    });
    stops.push(() => svc.stop());
    expect(svc.health()).toMatchObject({ status: "ok" });
    const deadline = Date.now() + 60_000;
    while (svc.health().status === "ok" && Date.now() < deadline) await new Promise((r) => setTimeout(r, 200));
    expect(svc.health()).toMatchObject({ status: "degraded", detail: { exitCode: 0 } });
    expect(b.clients).toContain("rg-sim-test");
    // 4 s at 20x = about 80 s of a 1 Hz loop
    expect(b.topics.get("rg/sim-lab/bench-1/fic-901/samples") ?? 0).toBeGreaterThan(40);
  }, 90_000);

  it("exits with a clear message when the broker refuses its credential", async () => {
    const b = await startBroker();
    const cfg = getConfig({ ...process.env, MQTT_PORT: String(b.port), MQTT_HOST: "127.0.0.1" });
    const ctx: ServerContext = { config: cfg, io: null, bus: new Bus(), clock: systemClock, services: new Map() };
    const svc = await startSimulators(ctx, {
      root,
      args: ["--scenario", path.join(root, "simulators/scenarios/gain-creep.json"), "--no-seed", "--duration", "4"],
      env: { SIM_DEVICE_CREDENTIALS: JSON.stringify({ "sim-lab": { username: "demo-key", password: "wrong", clientId: "rg-sim-test" } }) },
    });
    stops.push(() => svc.stop());
    const deadline = Date.now() + 60_000;
    while (svc.health().status === "ok" && Date.now() < deadline) await new Promise((r) => setTimeout(r, 200));
    const h = svc.health() as unknown as { detail: { exitCode: number; lastLine: string } };
    expect(h.detail.exitCode).toBe(1);
    expect(h.detail.lastLine).toMatch(/could not connect to the MQTT broker/);
  }, 90_000);
});
