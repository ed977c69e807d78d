/**
 * The UI benchmark's browsers: Chromium with frames locked to vsync or not, its processes' nice
 * values evened out on request, and the checks of frame pacing.
 */
import { spawnSync } from "node:child_process";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { chromium } from "playwright-core";
import { CHROMIUM_ARGS, findChromium, type TestBrowser } from "../setup/browser";
import { percentile, recordFrames } from "./ui-bench-frames";

/** Flags that stop Chromium from pacing frames at the display's vsync (checked by `frameCheck`). */
const UNLOCK_ARGS = [
  "--disable-frame-rate-limit",
  "--disable-gpu-vsync",
  "--run-all-compositor-stages-before-draw",
];

const profileDirs = new Map<TestBrowser, string>();

/**
 * BENCH_NICE=0: put every process of the bench's Chromium (found by its profile directory, and
 * their descendants) at nice 0 before a phase. Chromium runs its browser and GPU processes at
 * nice -8 and may run the page's renderer at nice 5; with frames unlocked the former draw back to
 * back and the renderer gets a small share of a loaded 2-core machine. Linux only (/proc).
 */
export function equalisePriorities(b: TestBrowser): void {
  const dir = profileDirs.get(b);
  if (process.env.BENCH_NICE !== "0" || !dir || !fs.existsSync("/proc")) return;
  const parent = new Map<number, number>();
  let root: number | null = null;
  for (const d of fs.readdirSync("/proc")) {
    if (!/^\d+$/.test(d)) continue;
    try {
      const stat = fs.readFileSync(`/proc/${d}/stat`, "utf8");
      parent.set(Number(d), Number(stat.slice(stat.lastIndexOf(")") + 2).split(" ")[1]));
      if (
        root === null &&
        fs.readFileSync(`/proc/${d}/cmdline`, "utf8").includes(`--user-data-dir=${dir}`)
      )
        root = Number(d);
    } catch {
      // the process ended meanwhile
    }
  }
  if (root === null) return;
  const mine = (pid: number): boolean => {
    for (let p = pid, hops = 0; p > 1 && hops < 10; p = parent.get(p) ?? 0, hops++)
      if (p === root) return true;
    return false;
  };
  for (const pid of parent.keys())
    if (mine(pid)) spawnSync("renice", ["-n", "0", "-p", String(pid)], { stdio: "ignore" });
}

export async function launch(unlocked: boolean): Promise<TestBrowser> {
  const executablePath = findChromium();
  if (!executablePath)
    throw new Error("Chromium not found on PATH: install Debian's `chromium` package.");
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-chromium-"));
  const context = await chromium.launchPersistentContext(dir, {
    executablePath,
    headless: true,
    args: [...CHROMIUM_ARGS, ...(unlocked ? UNLOCK_ARGS : [])],
    viewport: { width: 1600, height: 1000 },
    colorScheme: "dark",
  });
  const b: TestBrowser = {
    context,
    async close() {
      await context.close().catch(() => undefined);
      fs.rmSync(dir, { recursive: true, force: true });
    },
  };
  profileDirs.set(b, dir);
  return b;
}

/** rAF intervals of a near-empty page: about 16.7 ms when frames are vsync-locked, far less when not. */
export async function frameCheck(b: TestBrowser): Promise<number> {
  const page = await b.context.newPage();
  await page.setContent("<p id=x>0</p>");
  const r = await recordFrames(page, 1000, false);
  await page.close();
  return percentile(r.frames, 50);
}

/** Dropped frames of a vsync-locked run: an interval of k periods (16.7 ms) drops k - 1 frames. */
export function dropped(frames: number[]): { dropped: number; shown: number } {
  let d = 0;
  for (const f of frames) d += Math.max(0, Math.round(f / (1000 / 60)) - 1);
  return { dropped: d, shown: frames.length };
}

