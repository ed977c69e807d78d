/**
 * A private MariaDB server for Rimguard: found (or installed from Debian with apt-get when
 * allowed), initialised in its own data directory, started on loopback, provisioned with the
 * application database and user, and stopped again. No system-wide MariaDB configuration is
 * read (`--no-defaults` must be the first argument of both mariadbd and mariadb-install-db).
 *
 * State of a running server lives beside its data: `<dataDir>/mariadbd.pid` (the server's own
 * pid file) and `<dataDir>/rimguard-server.json` (port and socket), so `stop` works from another
 * process. The socket lives under os.tmpdir() because a UNIX socket path must stay under ~100 bytes.
 */
import { spawn, spawnSync } from "node:child_process";
import { createHash } from "node:crypto";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import mariadb from "mariadb";
import { findOrInstallMariaDb, portInUse } from "./mariadb-host";

export { findExecutable, findOrInstallMariaDb, freePort, portInUse } from "./mariadb-host";

export interface MariaDbOptions {
  /** Data directory (created and initialised when empty). */
  dataDir: string;
  /** TCP port on 127.0.0.1. */
  port: number;
  /** Socket path; default: a short path under os.tmpdir() derived from the data dir. */
  socket?: string;
  /** Database, user and password to provision (skipped when `database` is unset). */
  database?: string;
  user?: string;
  password?: string;
  /** May mariadb-server be installed with apt-get when mariadbd is missing (root only)? */
  allowApt?: boolean;
  /** Small-footprint settings for throw-away test servers (no durability flushes). */
  ephemeral?: boolean;
  /** Stop the server when this process id exits (a watchdog shell polls it once a second). */
  watchPid?: number;
  /** With watchPid: the directory the watchdog deletes after stopping the server (throw-away servers). */
  removeOnExit?: string;
  /** Progress messages (default: silent). */
  log?: (message: string) => void;
  /** Milliseconds to wait for the server to accept connections. */
  startTimeoutMs?: number;
}

export interface MariaDbHandle {
  host: "127.0.0.1";
  port: number;
  socket: string;
  dataDir: string;
  /** The server was already running and is reused. */
  reused: boolean;
  /** Stop the server (SIGTERM, then wait for it to exit). */
  stop(): Promise<void>;
}

interface ServerInfo {
  port: number;
  socket: string;
  pid: number;
}

/** A socket path under os.tmpdir() unique to the data dir and port (always < 100 bytes). */
export function defaultSocketPath(dataDir: string, port: number): string {
  const digest = createHash("sha1").update(path.resolve(dataDir)).digest("hex").slice(0, 10);
  const p = path.join(os.tmpdir(), `rg-mdb-${digest}-${port}.sock`);
  if (Buffer.byteLength(p) >= 100) throw new Error(`Socket path too long (${p}); set TMPDIR to a shorter directory.`);
  return p;
}

const infoPath = (dataDir: string) => path.join(dataDir, "rimguard-server.json");
const pidPath = (dataDir: string) => path.join(dataDir, "mariadbd.pid");
const errorLogPath = (dataDir: string) => path.join(dataDir, "mariadbd.err");
/** A private temporary directory beside the data dir: the shared /tmp is a source of name clashes. */
function tmpDirFor(dataDir: string): string {
  const d = `${path.resolve(dataDir)}.tmp`;
  fs.mkdirSync(d, { recursive: true });
  return d;
}

function isAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === "EPERM";
  }
}

function readServerInfo(dataDir: string): ServerInfo | null {
  try {
    const info = JSON.parse(fs.readFileSync(infoPath(dataDir), "utf8")) as Partial<ServerInfo>;
    const pidText = fs.readFileSync(pidPath(dataDir), "utf8").trim();
    const pid = Number(pidText);
    if (!Number.isInteger(pid) || typeof info.port !== "number" || typeof info.socket !== "string") return null;
    return { port: info.port, socket: info.socket, pid };
  } catch {
    return null;
  }
}

function tailOf(file: string, lines = 15): string {
  try {
    return fs.readFileSync(file, "utf8").trimEnd().split("\n").slice(-lines).join("\n");
  } catch {
    return "(no error log)";
  }
}

/** Open an administrative connection as root through the socket. */
export function rootConnection(socket: string, database?: string): Promise<mariadb.Connection> {
  return mariadb.createConnection({ socketPath: socket, user: "root", database, connectTimeout: 2000 });
}

async function waitReady(socket: string, pid: number, dataDir: string, timeoutMs: number): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  let lastError = "";
  while (Date.now() < deadline) {
    if (!isAlive(pid)) {
      throw new Error(`mariadbd exited during start-up. Last lines of ${errorLogPath(dataDir)}:\n${tailOf(errorLogPath(dataDir))}`);
    }
    try {
      const conn = await rootConnection(socket);
      await conn.end();
      return;
    } catch (e) {
      lastError = (e as Error).message;
      await new Promise((r) => setTimeout(r, 150));
    }
  }
  throw new Error(`mariadbd did not accept connections within ${timeoutMs} ms (${lastError}).\n${tailOf(errorLogPath(dataDir))}`);
}

function initialiseDataDir(installDb: string, dataDir: string, log: (m: string) => void): void {
  if (fs.existsSync(path.join(dataDir, "mysql"))) return;
  fs.mkdirSync(dataDir, { recursive: true });
  log(`Initialising a private MariaDB data directory in ${dataDir}...`);
  const args = [
    "--no-defaults",
    "--auth-root-authentication-method=normal",
    `--datadir=${path.resolve(dataDir)}`,
    `--tmpdir=${tmpDirFor(dataDir)}`,
    "--skip-test-db",
    "--skip-name-resolve",
  ];
  if (process.getuid?.() === 0) args.push("--user=root");
  const r = spawnSync(installDb, args, { encoding: "utf8" });
  if (r.status !== 0) {
    throw new Error(`${path.basename(installDb)} failed (exit ${r.status ?? r.signal}):\n${(r.stderr || r.stdout || "").slice(-2000)}`);
  }
}

function serverArgs(dataDir: string, port: number, socket: string, ephemeral: boolean): string[] {
  const abs = path.resolve(dataDir);
  const args = [
    "--no-defaults",
    `--datadir=${abs}`,
    `--tmpdir=${tmpDirFor(abs)}`,
    `--port=${port}`,
    "--bind-address=127.0.0.1",
    `--socket=${socket}`,
    `--pid-file=${pidPath(abs)}`,
    `--log-error=${errorLogPath(abs)}`,
    "--skip-name-resolve",
    "--character-set-server=utf8mb4",
    "--collation-server=utf8mb4_unicode_ci",
    "--default-time-zone=+00:00",
    "--max-connections=200",
    "--skip-log-bin",
  ];
  if (process.getuid?.() === 0) args.push("--user=root");
  if (ephemeral) {
    args.push(
      "--innodb-buffer-pool-size=32M",
      "--innodb-log-file-size=16M",
      "--innodb-flush-log-at-trx-commit=0",
      "--innodb-doublewrite=0",
      "--performance-schema=OFF",
      "--sync-frm=0",
    );
  } else {
    args.push("--innodb-buffer-pool-size=128M", "--performance-schema=OFF");
  }
  return args;
}

/** Quote an identifier for MariaDB (database names come from validated config). */
function ident(name: string): string {
  if (!/^[A-Za-z0-9_]+$/.test(name)) throw new Error(`Unsafe database identifier: ${name}`);
  return `\`${name}\``;
}

/**
 * Create the database (utf8mb4, unicode collation stated explicitly) and an application user
 * with all rights on that database only, for both 127.0.0.1 (TCP) and localhost (socket).
 */
export async function provisionDatabase(
  socket: string,
  opts: { database: string; user?: string; password?: string },
): Promise<void> {
  const conn = await rootConnection(socket);
  try {
    await conn.query(`CREATE DATABASE IF NOT EXISTS ${ident(opts.database)} CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci`);
    if (opts.user) {
      for (const host of ["127.0.0.1", "localhost"]) {
        await conn.query(`CREATE USER IF NOT EXISTS ?@? IDENTIFIED BY ?`, [opts.user, host, opts.password ?? ""]);
        await conn.query(`ALTER USER ?@? IDENTIFIED BY ?`, [opts.user, host, opts.password ?? ""]);
        await conn.query(`GRANT ALL PRIVILEGES ON ${ident(opts.database)}.* TO ?@?`, [opts.user, host]);
      }
    }
  } finally {
    await conn.end();
  }
}

async function waitExit(pid: number, timeoutMs: number): Promise<boolean> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    if (!isAlive(pid)) return true;
    await new Promise((r) => setTimeout(r, 100));
  }
  return !isAlive(pid);
}

/** Stop the server whose pid file is in `dataDir` (works from any process). Returns false if none ran. */
export async function stopMariaDb(dataDir: string, timeoutMs = 30_000): Promise<boolean> {
  const info = readServerInfo(dataDir);
  let pid = info?.pid;
  if (!pid) {
    try {
      pid = Number(fs.readFileSync(pidPath(dataDir), "utf8").trim());
    } catch {
      return false;
    }
  }
  if (!pid || !isAlive(pid)) return false;
  process.kill(pid, "SIGTERM");
  if (!(await waitExit(pid, timeoutMs))) {
    process.kill(pid, "SIGKILL");
    await waitExit(pid, 5000);
  }
  try {
    fs.rmSync(infoPath(dataDir), { force: true });
  } catch {
    // ignore
  }
  return true;
}

/**
 * Make sure a private mariadbd is serving `dataDir` on 127.0.0.1:`port`. When one is already
 * running for this data dir it is reused (idempotent); when the port is taken by something else
 * the call fails with a message saying so.
 */
export async function ensureMariaDb(opts: MariaDbOptions): Promise<MariaDbHandle> {
  const log = opts.log ?? (() => {});
  const dataDir = path.resolve(opts.dataDir);
  const timeout = opts.startTimeoutMs ?? 60_000;

  const running = readServerInfo(dataDir);
  if (running && isAlive(running.pid)) {
    try {
      const c = await rootConnection(running.socket);
      await c.end();
      if (running.port !== opts.port) {
        throw new Error(
          `A Rimguard MariaDB is already running for ${dataDir} on port ${running.port}, not ${opts.port}; stop it first (npm run db:stop).`,
        );
      }
      log(`Reusing the MariaDB already running on 127.0.0.1:${running.port} (pid ${running.pid}).`);
      if (opts.database) await provisionDatabase(running.socket, { database: opts.database, user: opts.user, password: opts.password });
      return {
        host: "127.0.0.1",
        port: running.port,
        socket: running.socket,
        dataDir,
        reused: true,
        stop: async () => void (await stopMariaDb(dataDir)),
      };
    } catch (e) {
      if ((e as Error).message.startsWith("A Rimguard MariaDB")) throw e;
      // a pid file from a dead or unrelated process: start afresh below
    }
  }

  const { server, installDb } = findOrInstallMariaDb(opts.allowApt ?? false, log);
  if (await portInUse(opts.port)) {
    throw new Error(
      `Port 127.0.0.1:${opts.port} is already in use by another program; choose another DB_PORT, or set DB_EXTERNAL=true to use that server.`,
    );
  }
  initialiseDataDir(installDb, dataDir, log);

  const socket = opts.socket ?? defaultSocketPath(dataDir, opts.port);
  fs.rmSync(socket, { force: true });
  const child = spawn(server, serverArgs(dataDir, opts.port, socket, opts.ephemeral ?? false), {
    detached: true,
    stdio: "ignore",
  });
  child.unref();
  const pid = child.pid;
  if (!pid) throw new Error(`Could not start ${server}.`);
  fs.writeFileSync(infoPath(dataDir), JSON.stringify({ port: opts.port, socket } satisfies Omit<ServerInfo, "pid">));
  log(`Starting mariadbd (pid ${pid}) on 127.0.0.1:${opts.port}...`);

  if (opts.watchPid) startWatchdog(opts.watchPid, pid, opts.removeOnExit ?? null);

  try {
    await waitReady(socket, pid, dataDir, timeout);
  } catch (e) {
    if (isAlive(pid)) process.kill(pid, "SIGKILL");
    throw e;
  }
  // The server writes its own pid file once ready; make sure it exists for `stop` from elsewhere.
  if (!fs.existsSync(pidPath(dataDir))) fs.writeFileSync(pidPath(dataDir), String(pid));
  if (opts.database) await provisionDatabase(socket, { database: opts.database, user: opts.user, password: opts.password });

  return {
    host: "127.0.0.1",
    port: opts.port,
    socket,
    dataDir,
    reused: false,
    async stop() {
      if (!isAlive(pid)) return;
      process.kill(pid, "SIGTERM");
      if (!(await waitExit(pid, 30_000))) {
        process.kill(pid, "SIGKILL");
        await waitExit(pid, 5000);
      }
      fs.rmSync(infoPath(dataDir), { force: true });
    },
  };
}

/**
 * A detached shell that waits for `ownerPid` to exit, then stops `serverPid` and optionally
 * deletes a throw-away directory: a test run killed mid-way leaves no server behind.
 */
function startWatchdog(ownerPid: number, serverPid: number, removeDir: string | null): void {
  // Only when the owner died first: a server stopped normally is the owner's business.
  const rm = removeDir ? `; sleep 1; rm -rf '${removeDir.replace(/'/g, "")}'` : "";
  const script =
    `while kill -0 ${ownerPid} 2>/dev/null && kill -0 ${serverPid} 2>/dev/null; do sleep 1; done; ` +
    `if ! kill -0 ${ownerPid} 2>/dev/null; then ` +
    `if kill -0 ${serverPid} 2>/dev/null; then kill -TERM ${serverPid}; ` +
    `i=0; while kill -0 ${serverPid} 2>/dev/null && [ $i -lt 30 ]; do sleep 1; i=$((i+1)); done; ` +
    `kill -KILL ${serverPid} 2>/dev/null; fi${rm}; fi`;
  const w = spawn("sh", ["-c", script], { detached: true, stdio: "ignore" });
  w.unref();
}
