/**
 * The simulators as a child process of the server (`npm start` unless SIMULATORS=false): one
 * `node --import tsx simulators/index.ts`, given the server's broker address and simulator
 * settings through its environment, its output prefixed into the server's log, and stopped
 * (SIGTERM, then SIGKILL after a grace period) when the server stops. The child also has an IPC
 * channel to this process and exits when it closes, which the kernel does when this process dies
 * in any way (kill -9 included): no orphan keeps publishing into the next server.
 */
import { spawn, type ChildProcess } from "node:child_process";
import path from "node:path";
import { tlsModeOf } from "./broker/tls";
import type { ServerContext, Service, ServiceHealth } from "./context";

export interface SimulatorsService extends Service {
  readonly pid: number | null;
  health(): ServiceHealth;
}

export interface StartSimulatorsOptions {
  /** Extra command-line flags for simulators/index.ts (e.g. ["--duration", "60"]). */
  args?: string[];
  /** Extra environment for the child. */
  env?: Record<string, string | undefined>;
  /** Repository root (default: the parent of this file's folder). */
  root?: string;
  /** Grace period before SIGKILL on stop, ms. */
  killAfterMs?: number;
}

export async function startSimulators(ctx: ServerContext, options: StartSimulatorsOptions = {}): Promise<SimulatorsService> {
  const root = options.root ?? path.resolve(import.meta.dirname, "..");
  const cfg = ctx.config;
  const env: NodeJS.ProcessEnv = {
    ...process.env,
    SIM_SPEEDUP: String(cfg.SIM_SPEEDUP),
    SIM_SEED: String(cfg.SIM_SEED),
    MQTT_HOST: cfg.MQTT_HOST,
    MQTT_PORT: String(cfg.MQTT_PORT),
    // the broker's TLS settings as this process resolved them, so the simulators use mqtts when it is required
    MQTT_TLS: tlsModeOf(cfg),
    MQTTS_PORT: String(cfg.MQTTS_PORT),
    MQTT_TLS_DIR: path.resolve(cfg.MQTT_TLS_DIR),
    ...(cfg.MQTTS_HOST ? { MQTTS_HOST: cfg.MQTTS_HOST } : {}),
    ...(cfg.MQTT_TLS_CERT ? { MQTT_TLS_CERT: path.resolve(cfg.MQTT_TLS_CERT) } : {}),
    ...(cfg.MQTT_CA_FILE ? { MQTT_CA_FILE: path.resolve(cfg.MQTT_CA_FILE) } : {}),
    // the simulators are devices with their own credentials: never hand them the server's
    ...(cfg.MQTT_URL ? { MQTT_URL: withoutCredentials(cfg.MQTT_URL) } : {}),
    MQTT_USERNAME: undefined,
    MQTT_PASSWORD: undefined,
    ...options.env,
  };
  const child: ChildProcess = spawn(process.execPath, ["--import", "tsx", path.join(root, "simulators", "index.ts"), ...(options.args ?? [])], {
    cwd: root,
    env,
    stdio: ["ignore", "pipe", "pipe", "ipc"],
  });
  child.channel?.unref(); // the channel is only a lifeline; it must not keep this process up
  let exited: { code: number | null; signal: NodeJS.Signals | null } | null = null;
  let lastLine = "";
  const exitPromise = new Promise<void>((resolve) => {
    child.once("exit", (code, signal) => {
      exited = { code, signal };
      resolve();
    });
  });
  const pipe = (stream: NodeJS.ReadableStream | null, out: NodeJS.WriteStream) => {
    stream?.setEncoding("utf8");
    let buf = "";
    stream?.on("data", (chunk: string) => {
      buf += chunk;
      let i: number;
      while ((i = buf.indexOf("\n")) >= 0) {
        const line = buf.slice(0, i);
        buf = buf.slice(i + 1);
        lastLine = line;
        out.write(line.startsWith("[simulators]") ? `${line}\n` : `[simulators] ${line}\n`);
      }
    });
  };
  pipe(child.stdout, process.stdout);
  pipe(child.stderr, process.stderr);
  await new Promise<void>((resolve, reject) => {
    child.once("spawn", () => resolve());
    child.once("error", (e) => reject(new Error(`could not start the simulators: ${e.message}`)));
  });

  return {
    name: "simulators",
    get pid() {
      return child.pid ?? null;
    },
    health(): ServiceHealth {
      if (!exited) return { status: "ok", detail: { pid: child.pid } };
      const ex = exited as { code: number | null; signal: NodeJS.Signals | null };
      return { status: "degraded", detail: { exitCode: ex.code, signal: ex.signal, lastLine } };
    },
    async stop() {
      if (exited) return;
      child.kill("SIGTERM");
      const grace = options.killAfterMs ?? 5_000;
      const timer = setTimeout(() => {
        if (!exited) child.kill("SIGKILL");
      }, grace);
      await exitPromise;
      clearTimeout(timer);
    },
  };
}

function withoutCredentials(url: string): string {
  try {
    const u = new URL(url);
    u.username = "";
    u.password = "";
    return u.toString();
  } catch {
    return url;
  }
}
