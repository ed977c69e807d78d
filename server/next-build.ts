/**
 * The production build of the Next app: is it there and current, and building it as a child
 * process (NODE_ENV=production, telemetry off, nothing fetched). Used by the start command and
 * the test server.
 */
import { spawn } from "node:child_process";
import fs from "node:fs";
import path from "node:path";

/** Inputs of the Next build: a file newer than .next/BUILD_ID means the build is stale. */
const BUILD_INPUTS = ["app", "lib", "models", "public", "next.config.ts", "postcss.config.mjs", "package-lock.json", "tsconfig.json"];
const SKIP_DIRS = new Set(["node_modules", ".next", ".data", ".git"]);

function newest(p: string): { mtime: number; file: string } {
  let st: fs.Stats;
  try {
    st = fs.statSync(p);
  } catch {
    return { mtime: 0, file: p };
  }
  if (!st.isDirectory()) return { mtime: st.mtimeMs, file: p };
  let best = { mtime: 0, file: p };
  for (const e of fs.readdirSync(p, { withFileTypes: true })) {
    if (SKIP_DIRS.has(e.name)) continue;
    const n = newest(path.join(p, e.name));
    if (n.mtime > best.mtime) best = n;
  }
  return best;
}

export interface BuildState {
  stale: boolean;
  /** In words, for the log ("no production build yet", "app/x.tsx changed since the last build"). */
  why: string;
}

export function buildState(root: string): BuildState {
  const id = path.join(root, ".next", "BUILD_ID");
  if (!fs.existsSync(id)) return { stale: true, why: "no production build yet" };
  const built = fs.statSync(id).mtimeMs;
  let best = { mtime: 0, file: "" };
  for (const p of BUILD_INPUTS) {
    const n = newest(path.join(root, p));
    if (n.mtime > best.mtime) best = n;
  }
  return best.mtime > built
    ? { stale: true, why: `${path.relative(root, best.file)} changed since the last build` }
    : { stale: false, why: "the build is current" };
}

/** Run `next build` in `root`; Ctrl-C during the build stops it. */
export function runNextBuild(root: string): Promise<void> {
  return new Promise((resolve, reject) => {
    const child = spawn(path.join(root, "node_modules", ".bin", "next"), ["build"], {
      cwd: root,
      stdio: "inherit",
      env: { ...process.env, NODE_ENV: "production", NEXT_TELEMETRY_DISABLED: "1" },
    });
    const forward = (sig: NodeJS.Signals) => child.kill(sig);
    process.on("SIGINT", forward);
    process.on("SIGTERM", forward);
    child.on("error", reject);
    child.on("exit", (code, signal) => {
      process.off("SIGINT", forward);
      process.off("SIGTERM", forward);
      if (code === 0) resolve();
      else reject(new Error(`next build failed (${signal ?? `exit ${code}`})`));
    });
  });
}
