/**
 * Parts of `npm run bench:pipeline` (./pipeline.bench.ts): the Socket.IO client process, the
 * simulator run, the scenario file, latency and event-loop summaries, and phase 1 (the bare
 * broker). A plain script module; loopback only.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { writeFileSync } from "node:fs";
import net from "node:net";
import path from "node:path";
import { monitorEventLoopDelay } from "node:perf_hooks";
import { procStats, quantile } from "./bench-support";

export const here = import.meta.dirname;
export const root = path.resolve(here, "../..");

export function flag(name: string, def: number): number {
  const i = process.argv.indexOf(`--${name}`);
  if (i < 0) return def;
  const v = Number(process.argv[i + 1]);
  if (!Number.isFinite(v) || v <= 0) throw new Error(`--${name} needs a positive number`);
  return v;
}

/** Track a child's last known CPU and RSS (it stops by itself; /proc vanishes with it). */
export function watchChild(child: ChildProcess): { last: () => { cpuS: number; peakRss: number } } {
  let cpuS = 0;
  let peakRss = 0;
  const timer = setInterval(() => {
    const s = child.pid ? procStats(child.pid) : null;
    if (s) {
      cpuS = s.cpuS;
      peakRss = Math.max(peakRss, s.rss);
    }
  }, 250);
  child.once("exit", () => clearInterval(timer));
  return { last: () => ({ cpuS, peakRss }) };
}

// ---------------------------------------------------------------- client process
export async function clientMain(): Promise<void> {
  const { io } = await import("socket.io-client");
  const [url, watchArg, loopsArg, withStates, warmupArg, batchArg] = process.argv.slice(process.argv.indexOf("--client") + 1);
  const warmupMs = Number(warmupArg ?? 0) * 1000;
  const batchSize = Number(batchArg ?? 1);
  const seen = new Map<number, number>();
  const watch = Number(watchArg);
  const loops = Number(loopsArg);
  const socket = io(url!, { transports: ["websocket"], reconnection: false });
  const lat: number[] = [];
  const steady: number[] = [];
  let firstT = 0;
  const perLoop = new Map<number, number>();
  let states = 0;
  socket.on("loop:samples", (batch: { loopId: number; samples: { t: number }[] }) => {
    const now = Date.now();
    // Only the last sample of each MQTT message is timed: its stamp is its production time, at
    // most one simulator tick before the publish. Lane i (loop id i + 1) sends 1 + (i mod batch)
    // samples first, then full batches (simulators/runner.ts), so with no loss (checked below) the
    // last of a message is sample number first, first + batch, first + 2 batch, ... of its loop.
    const first = 1 + ((batch.loopId - 1) % batchSize);
    let n = seen.get(batch.loopId) ?? 0;
    for (const s of batch.samples) {
      n++;
      if (n !== first && !(n > first && (n - first) % batchSize === 0)) continue;
      if (firstT === 0) firstT = s.t;
      lat.push(now - s.t);
      if (s.t >= firstT + warmupMs) steady.push(now - s.t);
    }
    seen.set(batch.loopId, n);
    perLoop.set(batch.loopId, (perLoop.get(batch.loopId) ?? 0) + batch.samples.length);
  });
  socket.on("loop:state", (batch: unknown[]) => {
    states += batch.length;
  });
  await new Promise<void>((resolve, reject) => {
    socket.once("connect", () => resolve());
    socket.once("connect_error", reject);
  });
  const step = Math.max(1, Math.floor(loops / watch));
  const ids: number[] = [];
  for (let i = 0; i < watch; i++) ids.push(1 + i * step);
  await Promise.all(ids.map((id) => new Promise<void>((resolve) => socket.emit("loop:watch", id, () => resolve()))));
  if (withStates === "1") socket.emit("bench:states" as never);
  process.stdout.write(`READY\n`);
  const finish = () => {
    lat.sort((a, b) => a - b);
    steady.sort((a, b) => a - b);
    const mem = process.memoryUsage().rss;
    const cpu = process.cpuUsage();
    process.stdout.write(
      `RESULT ${JSON.stringify({ received: [...seen.values()].reduce((a, b) => a + b, 0), timed: lat.length, perLoop: Object.fromEntries(perLoop), p50: quantile(lat, 0.5), p99: quantile(lat, 0.99), max: lat.at(-1) ?? null, steadyN: steady.length, steadyP50: quantile(steady, 0.5), steadyP99: quantile(steady, 0.99), steadyMax: steady.at(-1) ?? null, states, cpuS: (cpu.user + cpu.system) / 1e6, rss: mem })}\n`,
    );
    socket.close();
    process.exit(0);
  };
  process.on("SIGTERM", finish);
  setTimeout(finish, 10 * 60_000).unref(); // never outlive a stuck parent
}

// ---------------------------------------------------------------- server side
export interface SimRun {
  sent: number;
  messages: number;
  /** Largest lag of the simulator behind its own schedule (CPU-starved), ms. */
  lagMs: number | null;
  cpuS: number;
  peakRss: number;
  lastLine: string;
}

/**
 * Longest a sample may wait in a partial batch: long enough for a full batch at the loop's rate
 * (otherwise the runner's default 250 ms would cut "batch 10 at 10 Hz" to about 3 per message).
 * Only the last sample of each message is timed, so the wait is not part of the measured latency.
 */
export function batchDelayMs(opts: { hz: number; batch: number }): number {
  return Math.max(250, Math.ceil((opts.batch * 1000) / opts.hz) + 100);
}

export function runSimulator(port: number, scenarioFile: string, opts: { loops: number; hz: number; batch: number; seconds: number; protocol?: "json" | "sparkplug" }): Promise<SimRun> {
  const child = spawn(
    process.execPath,
    [
      "--import",
      "tsx",
      path.join(root, "simulators/index.ts"),
      "--scenario",
      scenarioFile,
      "--no-seed",
      "--loops",
      String(opts.loops),
      "--rate",
      String(opts.hz),
      "--batch",
      String(opts.batch),
      "--duration",
      String(opts.seconds),
      "--tick-ms",
      "20",
      "--stamp",
      "simulated",
      "--protocol",
      opts.protocol ?? "json",
    ],
    {
      cwd: root,
      env: {
        ...withoutMqttUrl(process.env),
        MQTT_HOST: "127.0.0.1",
        MQTT_PORT: String(port),
        SIM_SPEEDUP: "1",
        SIM_BATCH_DELAY_MS: String(batchDelayMs(opts)),
        SIM_DEVICE_CREDENTIALS: JSON.stringify({ "sim-lab": { username: "bench-key", password: "bench-secret-0123456789", clientId: "rg-sim-bench" } }),
      },
      stdio: ["ignore", "pipe", "pipe"],
    },
  );
  const stats = watchChild(child);
  let out = "";
  child.stdout!.on("data", (d: Buffer) => (out += d.toString()));
  child.stderr!.on("data", (d: Buffer) => (out += d.toString()));
  return new Promise((resolve) => {
    child.once("exit", () => {
      const m = /stopped \([^)]*\): (\d+) samples in (\d+) messages/.exec(out);
      const lag = /largest lag behind the clock (\d+) ms/.exec(out);
      const lines = out.trim().split("\n");
      resolve({ sent: m ? Number(m[1]) : 0, messages: m ? Number(m[2]) : 0, lagMs: lag ? Number(lag[1]) : null, ...stats.last(), lastLine: lines.at(-1) ?? "" });
    });
  });
}

export function withoutMqttUrl(env: NodeJS.ProcessEnv): NodeJS.ProcessEnv {
  const { MQTT_URL: _ignored, ...rest } = env;
  return rest;
}

export function writeScenario(dir: string): string {
  // One 1 Hz loop, cloned --loops times and sped to --hz by the simulator (rate multiplier).
  const file = path.join(dir, "bench.json");
  writeFileSync(
    file,
    JSON.stringify({
      name: "bench",
      description: "Load run: clones of one first-order loop.",
      activity: { setpointEveryS: 120 },
      inlineLoops: [
        {
          tenantSlug: "sim-lab",
          siteSlug: "bench-1",
          tag: "FIC-900",
          telemetryPeriodS: 1,
          controllerPeriodS: 1,
          plant: { type: "first-order", gain: 1.2, timeConstantS: 15, deadTimeS: 2 },
          controller: { kp: 1.5, ti: 15 },
          pvRange: [0, 100],
        },
      ],
    }),
  );
  return file;
}

/** Event-loop delay of this process (how long ready work waited: blocking code or CPU starvation), ms. */
export function delaySummary(h: ReturnType<typeof monitorEventLoopDelay>): string {
  const ms = (ns: number) => (ns / 1e6).toFixed(0);
  return `event-loop delay p50 ${ms(h.percentile(50))} ms, p99 ${ms(h.percentile(99))} ms, max ${ms(h.max)} ms`;
}

/** Latencies split at the warm-up: every sample, and those stamped at least `warmupMs` after the first. */
export class Latencies {
  all: number[] = [];
  steady: number[] = [];
  private firstT = 0;
  constructor(private readonly warmupMs: number) {}
  add(t: number, now: number): void {
    if (this.firstT === 0) this.firstT = t;
    this.all.push(now - t);
    if (t >= this.firstT + this.warmupMs) this.steady.push(now - t);
  }
  summary(): { p50: number | null; p99: number | null; max: number | null; steadyN: number; steadyP50: number | null; steadyP99: number | null; steadyMax: number | null } {
    this.all.sort((a, b) => a - b);
    this.steady.sort((a, b) => a - b);
    return {
      p50: quantile(this.all, 0.5),
      p99: quantile(this.all, 0.99),
      max: this.all.at(-1) ?? null,
      steadyN: this.steady.length,
      steadyP50: quantile(this.steady, 0.5),
      steadyP99: quantile(this.steady, 0.99),
      steadyMax: this.steady.at(-1) ?? null,
    };
  }
}

export async function bare(scenarioFile: string, opts: { loops: number; hz: number; batch: number; seconds: number; warmup: number }) {
  const { Aedes } = await import("aedes");
  const broker = await Aedes.createBroker();
  let received = 0;
  let first = 0;
  let last = 0;
  const lat = new Latencies(opts.warmup * 1000);
  await new Promise<void>((resolve) =>
    broker.subscribe(
      "rg/+/+/+/samples",
      (packet, cb) => {
        const v = JSON.parse((packet.payload as Buffer).toString("utf8")) as unknown;
        const n = Array.isArray(v) ? v.length : 1;
        const now = Date.now();
        const lastSample = (Array.isArray(v) ? v[v.length - 1] : v) as { t?: number } | undefined;
        if (typeof lastSample?.t === "number") lat.add(lastSample.t, now);
        if (received === 0) first = now;
        last = now;
        received += n;
        cb();
      },
      resolve,
    ),
  );
  const server = net.createServer((socket) => {
    socket.setNoDelay(true);
    broker.handle(socket);
  });
  await new Promise<void>((r) => server.listen(0, "127.0.0.1", r));
  const port = (server.address() as net.AddressInfo).port;
  const cpu0 = process.cpuUsage();
  const loopDelay = monitorEventLoopDelay({ resolution: 10 });
  loopDelay.enable();
  const sim = await runSimulator(port, scenarioFile, opts);
  await new Promise((r) => setTimeout(r, 1500));
  loopDelay.disable();
  const cpu = process.cpuUsage(cpu0);
  await new Promise<void>((r) => broker.close(() => r()));
  await new Promise<void>((r) => server.close(() => r()));
  return { sim, received, lat: lat.summary(), loopDelay: delaySummary(loopDelay), spanS: (last - first) / 1000, brokerCpuS: (cpu.user + cpu.system) / 1e6, rss: process.memoryUsage().rss };
}


