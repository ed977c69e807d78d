/**
 * Debian's Chromium through playwright-core (docs/architecture.md §11): a persistent context in a
 * temporary profile, headless, with the flags that keep it off the network. Close it with
 * `close()`, which also deletes the profile.
 */
import { execFileSync } from "node:child_process";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { chromium, type BrowserContext } from "playwright-core";

export const CHROMIUM_ARGS = [
  "--no-sandbox",
  "--disable-gpu",
  "--disable-quic",
  "--no-first-run",
  "--disable-background-networking",
  "--disable-component-update",
  "--disable-sync",
];

/** The chromium binary on PATH (Debian's `chromium` package), or null. */
export function findChromium(): string | null {
  for (const name of ["chromium", "chromium-browser"]) {
    try {
      const p = execFileSync("sh", ["-c", `command -v ${name}`], { encoding: "utf8" }).trim();
      if (p) return p;
    } catch {
      // not on PATH under this name
    }
  }
  return null;
}

export interface TestBrowser {
  context: BrowserContext;
  close(): Promise<void>;
}

export async function launchBrowser(opts: { viewport?: { width: number; height: number }; colorScheme?: "dark" | "light" } = {}): Promise<TestBrowser> {
  const executablePath = findChromium();
  if (!executablePath) throw new Error("Chromium not found on PATH: install Debian's `chromium` package.");
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-chromium-"));
  const context = await chromium.launchPersistentContext(dir, {
    executablePath,
    headless: true,
    args: CHROMIUM_ARGS,
    viewport: opts.viewport ?? { width: 1440, height: 900 },
    colorScheme: opts.colorScheme ?? "dark",
  });
  return {
    context,
    async close() {
      await context.close().catch(() => undefined);
      fs.rmSync(dir, { recursive: true, force: true });
    },
  };
}

/** Where screenshots go (git-ignored). */
export function artifactPath(name: string): string {
  const dir = path.resolve(import.meta.dirname, "..", "artifacts");
  fs.mkdirSync(dir, { recursive: true });
  return path.join(dir, name);
}
