/**
 * What the host gives a private MariaDB server: its executables (Debian's mariadb-server,
 * installed with apt-get when allowed) and a free loopback port.
 */
import { spawnSync } from "node:child_process";
import fs from "node:fs";
import net from "node:net";
import path from "node:path";

const SEARCH_DIRS = ["/usr/sbin", "/usr/libexec", "/usr/bin", "/usr/local/sbin", "/usr/local/bin"];

/** Find an executable by name on PATH and in the usual Debian locations. */
export function findExecutable(names: string[]): string | null {
  const dirs = [...(process.env.PATH ?? "").split(path.delimiter).filter(Boolean), ...SEARCH_DIRS];
  for (const name of names) {
    for (const dir of dirs) {
      const candidate = path.join(dir, name);
      try {
        fs.accessSync(candidate, fs.constants.X_OK);
        if (fs.statSync(candidate).isFile()) return candidate;
      } catch {
        // not here
      }
    }
  }
  return null;
}

/** Locate mariadbd, installing Debian's mariadb-server first when allowed. */
export function findOrInstallMariaDb(allowApt: boolean, log: (m: string) => void = () => {}): {
  server: string;
  installDb: string;
} {
  const find = () => ({
    server: findExecutable(["mariadbd", "mysqld"]),
    installDb: findExecutable(["mariadb-install-db", "mysql_install_db"]),
  });
  let found = find();
  if (!found.server || !found.installDb) {
    const isRoot = typeof process.getuid === "function" && process.getuid() === 0;
    if (!allowApt || !isRoot) {
      throw new Error(
        "MariaDB server not found (looked for mariadbd on PATH, /usr/sbin and /usr/libexec). " +
          "Install Debian's package with `apt-get install -y mariadb-server` " +
          (isRoot ? "(or set DB_ALLOW_APT=true to let Rimguard do it)" : "as root") +
          ", or point Rimguard at an existing server with DB_EXTERNAL=true and DB_HOST/DB_PORT/DB_USER/DB_PASSWORD.",
      );
    }
    log("mariadbd not found: installing mariadb-server with apt-get (non-interactive)...");
    const env = { ...process.env, DEBIAN_FRONTEND: "noninteractive" };
    for (const args of [["update"], ["install", "-y", "--no-install-recommends", "mariadb-server"]]) {
      const r = spawnSync("apt-get", args, { env, stdio: "inherit" });
      if (r.status !== 0) throw new Error(`apt-get ${args.join(" ")} failed (exit ${r.status ?? r.signal}).`);
    }
    found = find();
    if (!found.server || !found.installDb) {
      throw new Error("mariadb-server was installed but mariadbd / mariadb-install-db are still not found.");
    }
  }
  return { server: found.server, installDb: found.installDb };
}

/** Is something accepting TCP connections on 127.0.0.1:port? */
export function portInUse(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const s = net.connect({ host: "127.0.0.1", port });
    s.once("connect", () => {
      s.destroy();
      resolve(true);
    });
    s.once("error", () => resolve(false));
  });
}

/** A free TCP port on 127.0.0.1 (the kernel's choice). */
export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = net.createServer();
    srv.once("error", reject);
    srv.listen(0, "127.0.0.1", () => {
      const addr = srv.address();
      srv.close(() => (addr && typeof addr === "object" ? resolve(addr.port) : reject(new Error("no port"))));
    });
  });
}
