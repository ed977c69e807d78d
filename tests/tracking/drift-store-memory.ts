/**
 * A drift checkpoint store in memory (the chunk table as a Map), for the drift checkpoint tests
 * and the size measurement (tests/bench/drift-checkpoint-size.ts): what
 * lib/data/drift-checkpoints.ts does with SQL, the same ledger deciding what is written.
 */
import { DriftChunkLedger, decodeDrift, writeBytes } from "@/server/tracking/drift-chunks";
import type { DriftCheckpoint } from "@/server/tracking/drift-checkpoint";
import type { LoopTracker } from "@/server/tracking/loop-tracker";

export class MemoryDriftStore {
  readonly chunks = new Map<string, Buffer>();
  header: string | null = null;
  readonly ledger = new DriftChunkLedger();
  /** Bytes sent by every save so far (header and new chunks), and the saves. */
  bytesWritten = 0;
  saves = 0;

  constructor(readonly loopId = 1) {}

  /** Store `tracker`'s drift part now (right after its main checkpoint). */
  save(tracker: LoopTracker): void {
    const cp = tracker.drift!.checkpoint(this.ledger.generation(this.loopId));
    const w = this.ledger.plan(this.loopId, 1, cp);
    for (const p of w.put) this.chunks.set(p.hash, p.data);
    for (const h of w.drop) this.chunks.delete(h);
    this.header = w.header;
    this.ledger.committed(w);
    this.bytesWritten += writeBytes(w);
    this.saves++;
  }

  /** Bytes stored: the header and every chunk. */
  get size(): number {
    let n = this.header ? Buffer.byteLength(this.header) : 0;
    for (const c of this.chunks.values()) n += c.length;
    return n;
  }

  load(): DriftCheckpoint {
    return decodeDrift(this.header!, this.chunks);
  }
}
