/**
 * One simulator per device: before connecting, a simulator takes a lock file per device
 * credential (its MQTT client id on one broker) under SIM_LOCK_DIR (default .data/). A second
 * simulator for a device whose lock is held by a live simulator process stops with a message
 * naming the holder, instead of fighting it for the client id.
 *
 * Why a lock and not the broker: MQTT 3.1.1 §3.1.4 says a CONNECT with a client id already in use
 * takes over the session (the broker disconnects the older connection). A broker that refused
 * the newcomer instead would lock a real gateway out after a half-open TCP connection until the
 * keep-alive expires, and an external broker (MQTT_URL) would not do it at all. The lock is held
 * by a process, so it is only as wide as one host's .data folder — which is where both the server's
 * own simulator child and `npm run simulate` run.
 *
 * A lock is stale when its process is gone (kill(pid, 0) fails with ESRCH) or, where /proc exists,
 * when that pid now belongs to something that is not a simulator (a reused pid after a kill -9).
 */
import { createHash } from "node:crypto";
import fs from "node:fs";
import path from "node:path";

export interface DeviceLock {
  /** Remove the lock files this process holds (idempotent; also run at process exit). */
  release(): void;
}

interface Holder {
  pid: number;
  clientId: string;
  broker: string;
  startedAt: string;
}

export class DeviceLockedError extends Error {
  constructor(readonly holder: Holder) {
    super(
      `another simulator (pid ${holder.pid}, started ${holder.startedAt}) is already publishing as device ${holder.clientId} on ${holder.broker}; stop it first (two publishers with one client id take the connection from each other)`,
    );
    this.name = "DeviceLockedError";
  }
}

function lockPath(dir: string, broker: string, clientId: string): string {
  const h = createHash("sha256").update(`${broker}\n${clientId}`).digest("hex").slice(0, 16);
  return path.join(dir, `simulator-${clientId.replace(/[^A-Za-z0-9_-]/g, "_").slice(0, 48)}-${h}.lock`);
}

function isSimulatorAlive(pid: number): boolean {
  if (!Number.isInteger(pid) || pid <= 0) return false;
  try {
    process.kill(pid, 0);
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === "EPERM";
  }
  try {
    const cmd = fs.readFileSync(`/proc/${pid}/cmdline`, "utf8");
    return cmd.includes("simulators");
  } catch {
    return true; // no /proc: trust kill(pid, 0)
  }
}

function readHolder(file: string): Holder | null {
  try {
    return JSON.parse(fs.readFileSync(file, "utf8")) as Holder;
  } catch {
    return null;
  }
}

/** Take the lock of every device (client id) on `broker`, or throw DeviceLockedError (holding none). */
export function acquireDeviceLocks(dir: string, broker: string, clientIds: readonly string[]): DeviceLock {
  fs.mkdirSync(dir, { recursive: true });
  const held: string[] = [];
  const release = () => {
    for (const file of held.splice(0)) if (readHolder(file)?.pid === process.pid) fs.rmSync(file, { force: true });
  };
  try {
    for (const clientId of new Set(clientIds)) {
      const file = lockPath(dir, broker, clientId);
      const me: Holder = { pid: process.pid, clientId, broker, startedAt: new Date().toISOString() };
      for (let attempt = 0; ; attempt++) {
        try {
          fs.writeFileSync(file, JSON.stringify(me), { flag: "wx" });
          held.push(file);
          break;
        } catch (e) {
          if ((e as NodeJS.ErrnoException).code !== "EEXIST" || attempt > 0) throw e;
          const holder = readHolder(file);
          if (holder && holder.pid !== process.pid && isSimulatorAlive(holder.pid)) throw new DeviceLockedError(holder);
          fs.rmSync(file, { force: true }); // stale: its simulator is gone
        }
      }
    }
  } catch (e) {
    release();
    throw e;
  }
  process.once("exit", release);
  return { release };
}
