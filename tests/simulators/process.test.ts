/**
 * The simulators as a process: `node --import tsx simulators/index.ts` (what `npm run simulate`
 * and the server's child process run) against an aedes broker on port 0 that checks the device
 * credential, with a scenario of inline loops and --duration so it stops by itself.
 */
import { spawn } from "node:child_process";
import fs from "node:fs";
import net from "node:net";
import os from "node:os";
import path from "node:path";
import { Aedes } from "aedes";
import { afterAll, afterEach, describe, expect, it } from "vitest";
import { getConfig } from "@/lib/config";
import { decodePayload, validateSample } from "@/lib/domain/telemetry";
import { Bus, systemClock, type ServerContext } from "@/server/context";
import { startSimulators } from "@/server/simulators-process";

const root = path.resolve(import.meta.dirname, "../..");
const lockDir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-simlock-"));
const CRED = JSON.stringify({ "sim-lab/bench-1": { username: "demo-key", password: "demo-secret", clientId: "rg-sim-test" } });
const SCENARIO = path.join(root, "simulators/scenarios/gain-creep.json");
const stops: (() => Promise<void>)[] = [];
afterEach(async () => {
  while (stops.length) await stops.pop()!();
});
afterAll(() => fs.rmSync(lockDir, { recursive: true, force: true }));

/** A live process (a zombie waiting for its reaper counts as gone). */
function alive(pid: number): boolean {
  try {
    process.kill(pid, 0);
  } catch {
    return false;
  }
  try {
    return !/^\d+ \(.*\) Z/.test(fs.readFileSync(`/proc/${pid}/stat`, "utf8"));
  } catch {
    return false;
  }
}
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
async function waitFor(what: string, ok: () => boolean, ms: number): Promise<void> {
  const deadline = Date.now() + ms;
  while (!ok()) {
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}`);
    await sleep(100);
  }
}
const total = (m: Map<string, number>) => [...m.values()].reduce((a, b) => a + b, 0);

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

  it("ends within a few seconds when its parent is killed with SIGKILL (no orphan keeps publishing)", async () => {
    const b = await startBroker();
    const parent = spawn(process.execPath, ["--import", "tsx", path.join(root, "tests/simulators/parent-fixture.ts"), "--scenario", SCENARIO, "--no-seed", "--speedup", "20"], {
      cwd: root,
      env: { ...process.env, MQTT_PORT: String(b.port), MQTT_HOST: "127.0.0.1", SIM_LOCK_DIR: lockDir, SIM_DEVICE_CREDENTIALS: CRED },
      stdio: ["ignore", "pipe", "inherit"],
    });
    stops.push(async () => void (parent.exitCode === null && parent.signalCode === null && parent.kill("SIGKILL")));
    let out = "";
    parent.stdout.setEncoding("utf8").on("data", (c: string) => (out += c));
    await waitFor("the child's pid", () => /child-pid \d+/.test(out), 60_000);
    const childPid = Number(/child-pid (\d+)/.exec(out)![1]);
    stops.push(async () => void (alive(childPid) && process.kill(childPid, "SIGKILL")));
    await waitFor("the child's first samples", () => total(b.topics) > 0, 60_000);

    parent.kill("SIGKILL");
    const killedAt = Date.now();
    await waitFor("the orphaned simulator to exit", () => !alive(childPid), 10_000);
    const secondsToExit = (Date.now() - killedAt) / 1000;
    expect(secondsToExit).toBeLessThan(10);
    const after = total(b.topics);
    await sleep(1_500);
    expect(total(b.topics)).toBe(after); // nothing published after it is gone
  }, 120_000);

  it("refuses a second simulator for the same device while the first is alive; a dead holder's lock is taken over", async () => {
    const b = await startBroker();
    const cfg = getConfig({ ...process.env, MQTT_PORT: String(b.port), MQTT_HOST: "127.0.0.1", SIM_SPEEDUP: "20" });
    const ctx: ServerContext = { config: cfg, io: null, bus: new Bus(), clock: systemClock, services: new Map() };
    const env = { SIM_DEVICE_CREDENTIALS: CRED, SIM_LOCK_DIR: lockDir };
    const args = ["--scenario", SCENARIO, "--no-seed", "--duration", "60"];
    const first = await startSimulators(ctx, { root, args, env });
    stops.push(() => first.stop());
    await waitFor("the first simulator's samples", () => total(b.topics) > 0, 60_000);

    const second = await startSimulators(ctx, { root, args, env });
    stops.push(() => second.stop());
    await waitFor("the second simulator to give up", () => second.health().status !== "ok", 60_000);
    const h = second.health() as unknown as { detail: { exitCode: number; lastLine: string } };
    expect(h.detail.exitCode).toBe(1);
    expect(h.detail.lastLine).toContain(`another simulator (pid ${first.pid}`);
    expect(b.clients.filter((c) => c === "rg-sim-test")).toHaveLength(1); // it never connected
    expect(first.health().status).toBe("ok");

    // kill -9 of the holder leaves its lock file behind; the next simulator sees a dead pid and starts.
    process.kill(first.pid!, "SIGKILL");
    await waitFor("the first simulator to die", () => first.health().status !== "ok", 10_000);
    const third = await startSimulators(ctx, { root, args, env });
    stops.push(() => third.stop());
    await waitFor("the third simulator to connect", () => b.clients.filter((c) => c === "rg-sim-test").length === 2, 60_000);
    expect(third.health().status).toBe("ok");
  }, 150_000);
});
