/**
 * server/objectstore: the embedded S3 stand-in (s3rver) through @aws-sdk/client-s3 on loopback.
 * Files survive a restart in a fixed directory; a port-0 instance uses a temporary directory
 * that is removed on stop.
 */
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { afterEach, describe, expect, it } from "vitest";
import { getConfig } from "@/lib/config";
import { Bus, systemClock, type ServerContext } from "@/server/context";
import { startObjectStore, type ObjectStoreService } from "@/server/objectstore";

const ctx = (): ServerContext => ({ config: getConfig({ NODE_ENV: "test" }), io: null, bus: new Bus(), clock: systemClock, services: new Map() });
const running: ObjectStoreService[] = [];
const dirs: string[] = [];
afterEach(async () => {
  for (const s of running.splice(0)) await s.stop().catch(() => {});
  for (const d of dirs.splice(0)) fs.rmSync(d, { recursive: true, force: true });
});

describe("object store", () => {
  it("puts, gets and deletes bytes unchanged; a missing key is an S3 NoSuchKey error", async () => {
    const s = await startObjectStore(ctx(), { port: 0 });
    running.push(s);
    expect(s.endpoint).toMatch(/^http:\/\/127\.0\.0\.1:\d+$/);
    const bytes = new Uint8Array([0, 1, 2, 255, 0xe2, 0x82, 0xac, 10]);
    await s.put("a/b/c.csv", bytes, "text/csv");
    expect(Buffer.from((await s.get("a/b/c.csv"))!).equals(Buffer.from(bytes))).toBe(true);
    await s.delete("a/b/c.csv");
    await expect(s.get("a/b/c.csv")).rejects.toMatchObject({ name: "NoSuchKey" });
    expect((await s.health()).status).toBe("degraded"); // the failed get is counted
  });

  it("keeps files across a restart in a fixed directory; a port-0 instance cleans its temporary directory", async () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-os-test-"));
    dirs.push(dir);
    const a = await startObjectStore(ctx(), { port: 0, directory: dir });
    await a.put("keep.csv", new TextEncoder().encode("t,mv,pv\n"), "text/csv");
    await a.stop();
    const b = await startObjectStore(ctx(), { port: 0, directory: dir });
    running.push(b);
    expect((await b.get("keep.csv"))!.toString("utf8")).toBe("t,mv,pv\n");

    const c = await startObjectStore(ctx(), { port: 0 });
    expect(c.directory).not.toBeNull();
    expect(path.basename(c.directory!)).toMatch(/^rg-objectstore-/);
    expect(fs.existsSync(c.directory!)).toBe(true);
    await c.stop();
    expect(fs.existsSync(c.directory!)).toBe(false);
  });
});
