/**
 * The backfill's heap guard (server/backfill/heap-guard.ts): no collection while the heap stays
 * within its slack; once garbage has grown it past the slack, one full collection that brings
 * the heap back down, and a new limit from there.
 */
import { getHeapStatistics } from "node:v8";
import { describe, expect, it } from "vitest";
import { HeapGuard } from "@/server/backfill/heap-guard";

const used = () => getHeapStatistics().used_heap_size;

/** Garbage that outlives young-generation collections (so it reaches old space), then dropped. */
function makeOldGarbage(bytes: number): void {
  let keep: number[][] = [];
  for (let n = 0; n < bytes / 8_000; n++) keep.push(new Array<number>(1000).fill(n));
  keep = [];
  void keep;
}

describe("HeapGuard", () => {
  it("collects only once the heap grew past its slack, and the collection frees the garbage", () => {
    const slack = 32 * 2 ** 20;
    const guard = new HeapGuard(slack);
    expect(guard.check()).toBe(false);
    expect(guard.collections).toBe(0);
    const before = used();
    makeOldGarbage(3 * slack);
    const grown = used();
    expect(grown - before).toBeGreaterThan(slack);
    expect(guard.check()).toBe(true);
    expect(guard.collections).toBe(1);
    expect(used()).toBeLessThan(grown - slack);
    expect(guard.check()).toBe(false);
  });
});
