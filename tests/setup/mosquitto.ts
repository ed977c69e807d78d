/**
 * A private Debian `mosquitto` for tests of the external-broker mode (MQTT_URL): a generated
 * configuration in a temporary directory, listeners on loopback only (a plain one unless
 * `tlsOnly`, and an mqtts one with a self-signed certificate made by openssl as the demo makes
 * its own), a password file written by `mosquitto_passwd` and an ACL file. It is stopped by
 * `stop()`, and a watchdog shell stops it too when the test process dies in any way.
 */
import { execFileSync, spawn } from "node:child_process";
import fs from "node:fs";
import net from "node:net";
import os from "node:os";
import path from "node:path";
import { ensureSelfSignedPair } from "@/server/broker/tls";

export interface MosquittoUser {
  username: string;
  password: string;
  /** ACL lines for this user, e.g. "topic write rg/acme/north/+/samples". */
  acl: string[];
}

export interface MosquittoOptions {
  users: MosquittoUser[];
  /** No plain listener: only mqtts is offered. */
  tlsOnly?: boolean;
}

export interface MosquittoBroker {
  /** mqtt://127.0.0.1:port, or null when tlsOnly. */
  plainUrl: string | null;
  /** mqtts://localhost:port (the certificate names localhost and 127.0.0.1). */
  tlsUrl: string;
  tlsPort: number;
  /** The broker's self-signed certificate (PEM) and its file: what a client trusts. */
  cert: Buffer;
  certPath: string;
  /** mosquitto's log so far (its stderr). */
  log(): string;
  stop(): Promise<void>;
}

/** The mosquitto binary: on PATH, or where Debian installs it (/usr/sbin is not on every user's PATH). */
function mosquittoBinary(): string | null {
  try {
    return execFileSync("sh", ["-c", "command -v mosquitto"], { encoding: "utf8" }).trim() || null;
  } catch {
    return fs.existsSync("/usr/sbin/mosquitto") ? "/usr/sbin/mosquitto" : null;
  }
}

export function mosquittoAvailable(): boolean {
  return mosquittoBinary() !== null;
}

async function freePort(): Promise<number> {
  const srv = net.createServer();
  await new Promise<void>((r) => srv.listen(0, "127.0.0.1", () => r()));
  const port = (srv.address() as net.AddressInfo).port;
  await new Promise<void>((r) => srv.close(() => r()));
  return port;
}

async function waitForPort(port: number, ms: number, log: () => string): Promise<void> {
  const end = Date.now() + ms;
  for (;;) {
    const ok = await new Promise<boolean>((resolve) => {
      const s = net.connect(port, "127.0.0.1", () => {
        s.destroy();
        resolve(true);
      });
      s.on("error", () => resolve(false));
    });
    if (ok) return;
    if (Date.now() > end) throw new Error(`mosquitto did not listen on ${port}:\n${log()}`);
    await new Promise((r) => setTimeout(r, 50));
  }
}

export async function startMosquitto(opts: MosquittoOptions): Promise<MosquittoBroker> {
  const bin = mosquittoBinary();
  if (!bin) throw new Error("mosquitto is not installed (Debian: apt-get install mosquitto)");
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-mosq-"));
  const { certPath, keyPath } = ensureSelfSignedPair(dir);
  const passwd = path.join(dir, "passwd");
  fs.writeFileSync(passwd, "", { mode: 0o600 });
  for (const u of opts.users) execFileSync("mosquitto_passwd", ["-b", passwd, u.username, u.password], { stdio: "ignore" });
  const acl = path.join(dir, "acl");
  fs.writeFileSync(acl, opts.users.map((u) => [`user ${u.username}`, ...u.acl, ""].join("\n")).join("\n"), { mode: 0o600 });
  const plainPort = opts.tlsOnly ? null : await freePort();
  const tlsPort = await freePort();
  const conf = path.join(dir, "mosquitto.conf");
  fs.writeFileSync(
    conf,
    [
      // run as the invoking user (as root, mosquitto would switch to the user "mosquitto", which cannot read this directory)
      ...(process.getuid?.() === 0 ? ["user root"] : []),
      "per_listener_settings false",
      "allow_anonymous false",
      `password_file ${passwd}`,
      `acl_file ${acl}`,
      "persistence false",
      "log_dest stderr",
      "log_type error",
      "log_type warning",
      "log_type notice",
      ...(plainPort ? [`listener ${plainPort} 127.0.0.1`] : []),
      `listener ${tlsPort} 127.0.0.1`,
      `certfile ${certPath}`,
      `keyfile ${keyPath}`,
      "tls_version tlsv1.2",
      "",
    ].join("\n"),
  );
  // The watchdog ends mosquitto when this process is gone (even after kill -9) or on stop().
  const child = spawn(
    "sh",
    ["-c", '"$3" -c "$1" & m=$!; trap "kill $m 2>/dev/null; exit 0" TERM; while kill -0 "$2" 2>/dev/null && kill -0 $m 2>/dev/null; do sleep 1 & wait $!; done; kill $m 2>/dev/null', "watchdog", conf, String(process.pid), bin],
    { stdio: ["ignore", "ignore", "pipe"] },
  );
  let log = "";
  child.stderr!.on("data", (d: Buffer) => (log += d.toString()));
  const exited = new Promise<void>((r) => child.once("exit", () => r()));
  const stop = async () => {
    child.kill("SIGTERM");
    await exited;
    fs.rmSync(dir, { recursive: true, force: true });
  };
  try {
    if (plainPort) await waitForPort(plainPort, 10_000, () => log);
    await waitForPort(tlsPort, 10_000, () => log);
  } catch (e) {
    await stop();
    throw e;
  }
  return {
    plainUrl: plainPort ? `mqtt://127.0.0.1:${plainPort}` : null,
    tlsUrl: `mqtts://localhost:${tlsPort}`,
    tlsPort,
    cert: fs.readFileSync(certPath),
    certPath,
    log: () => log,
    stop,
  };
}
