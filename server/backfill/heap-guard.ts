/**
 * Keeps a backfill's garbage from growing the server's memory. The replay runs hours of samples
 * in seconds: tracker internals and queued history rows that live for minutes of sample time
 * outlive young-generation collections and are promoted, and V8 lets old space grow to several
 * times the live heap before it collects it (bench:backfill: heap used 79 -> 304 MiB on a 50 MB
 * file, back to ~70 MiB after a full collection: garbage, nothing retained). The guard asks for a
 * full collection whenever the heap has grown by `slackBytes` since the last one, about once a
 * minute at the replay's promotion rate, one pause of tens of ms.
 */
import { getHeapStatistics, setFlagsFromString } from "node:v8";
import { runInNewContext } from "node:vm";

let collect: (() => void) | null | undefined;

/** A function that runs a full collection, or null when the runtime refuses to give one. */
function fullCollection(): (() => void) | null {
  if (collect !== undefined) return collect;
  const global = (globalThis as { gc?: () => void }).gc;
  if (typeof global === "function") return (collect = global);
  try {
    // --expose-gc applies to contexts created afterwards; the server's own global is left as it is
    setFlagsFromString("--expose-gc");
    const fn: unknown = runInNewContext("gc");
    collect = typeof fn === "function" ? (fn as () => void) : null;
  } catch {
    collect = null;
  }
  return collect;
}

export class HeapGuard {
  private limit: number;
  collections = 0;

  constructor(private readonly slackBytes = 48 * 2 ** 20) {
    this.limit = getHeapStatistics().used_heap_size + slackBytes;
  }

  /** Cheap (reads V8's counters); collects when the heap passed its limit. Returns whether it did. */
  check(): boolean {
    if (getHeapStatistics().used_heap_size <= this.limit) return false;
    const gc = fullCollection();
    if (!gc) return false;
    gc();
    this.collections++;
    this.limit = getHeapStatistics().used_heap_size + this.slackBytes;
    return true;
  }
}
