/**
 * The drift part of the estimator checkpoints in MariaDB (docs/architecture.md §6, "Checkpoints"):
 * taken from every tracker right after its main checkpoint (the same moment: the restore checks
 * the stamp), planned by the chunk ledger (./drift-chunks.ts: only new chunks are written) and
 * written by lib/data/drift-checkpoints.ts; at start, resumed into each tracker whose main
 * checkpoint was restored. A drift part that cannot be taken, written or read is logged with its
 * reason and left out; the rest of the checkpoint and the tracker go on (the rim forecast then
 * falls back to the radius history, docs/domain.md §7).
 */
import type { Sequelize } from "sequelize";
import { loadDriftCheckpoint, loadDriftChunkHashes, saveDriftCheckpoints } from "@/lib/data/drift-checkpoints";
import { decodeDrift, DriftChunkLedger, writeBytes, type DriftWrite } from "./drift-chunks";
import type { TrackerRegistry } from "./registry";

/** Time a checkpoint may spend taking new bases of the drift (ms; the server's event loop waits meanwhile). */
const BASE_BUDGET_MS = 250;

export interface DriftStoreStats {
  restoredAtStart: number;
  droppedAtStart: { loopId: number; reason: string }[];
  /** Drift parts written since start, their bytes (headers and new chunks), the last failure. */
  written: number;
  bytesWritten: number;
  error: string | null;
}

export class DriftCheckpointStore {
  private readonly ledger = new DriftChunkLedger();
  private rotation = 0;
  private readonly logged = new Map<number, string>();
  private readonly stats: DriftStoreStats = { restoredAtStart: 0, droppedAtStart: [], written: 0, bytesWritten: 0, error: null };

  constructor(private readonly sequelize: Sequelize) {}

  /** Resume the drift of each of `loopIds` (their trackers just restored from their checkpoints); learns what is stored. */
  async restore(registry: TrackerRegistry, loopIds: readonly number[]): Promise<void> {
    try {
      for (const [loopId, hashes] of await loadDriftChunkHashes(this.sequelize)) this.ledger.know(loopId, hashes);
    } catch (e) {
      // Without the list of stored chunks a restore cannot tell what it may delete later: no drift
      // is resumed (the trackers go on from their own checkpoints), the next start tries again.
      this.stats.error = `stored drift chunks could not be listed: ${e instanceof Error ? e.message : String(e)}`;
      console.error(`[pipeline] ${this.stats.error}; no drift part resumed (the rim forecast falls back to the radius history)`);
      return;
    }
    for (const loopId of loopIds) {
      const drift = registry.get(loopId)?.drift;
      if (!drift) continue;
      let reason: string | null;
      try {
        const stored = await loadDriftCheckpoint(this.sequelize, loopId);
        if (!stored) continue;
        reason = drift.restore(decodeDrift(stored.header, stored.chunks));
      } catch (e) {
        reason = e instanceof Error ? e.message : String(e);
      }
      if (reason === null) {
        this.stats.restoredAtStart++;
        continue;
      }
      this.stats.droppedAtStart.push({ loopId, reason });
      console.warn(`[pipeline] loop ${loopId}: the drift part of its checkpoint was dropped (the rim forecast falls back to the radius history): ${reason}`);
    }
  }

  /**
   * Every tracker's drift part now (call right after `registry.checkpoint()`, before any await).
   * New bases (an image of the whole drift, about 10 ms each at 5 h) are taken only while this
   * checkpoint has spent less than `baseBudgetMs`, starting each time where the last one stopped:
   * a loop past the budget writes its journal on the base it has, or nothing this time (no base
   * stored yet: its previous drift part then no longer matches and a restore drops it).
   */
  take(registry: TrackerRegistry, baseBudgetMs = BASE_BUDGET_MS): DriftWrite[] {
    const out: DriftWrite[] = [];
    const started = performance.now();
    const all = registry.entries();
    const first = this.rotation % Math.max(1, all.length);
    this.rotation = first + 1;
    for (let k = 0; k < all.length; k++) {
      const { loopId, tenantId, tracker } = all[(first + k) % all.length]!;
      try {
        const stored = this.ledger.generation(loopId);
        const cp = performance.now() - started < baseBudgetMs ? tracker.drift?.checkpoint(stored) : tracker.drift?.checkpoint(stored, false);
        if (cp) out.push(this.ledger.plan(loopId, tenantId, cp));
        this.logged.delete(loopId);
      } catch (e) {
        const why = (e as Error).message;
        this.stats.error = `loop ${loopId}: ${why}`;
        // once per loop and reason: the same state fails the same way every minute
        if (this.logged.get(loopId) !== why) console.error(`[pipeline] drift checkpoint of loop ${loopId} left out:`, why);
        this.logged.set(loopId, why);
      }
    }
    return out;
  }

  async save(writes: DriftWrite[], now: number): Promise<void> {
    try {
      await saveDriftCheckpoints(this.sequelize, writes, now);
    } catch (err) {
      for (const w of writes) this.ledger.failed(w);
      this.stats.error = err instanceof Error ? err.message : String(err);
      console.error("[pipeline] drift checkpoint failed:", this.stats.error);
      return;
    }
    for (const w of writes) {
      this.ledger.committed(w);
      this.stats.bytesWritten += writeBytes(w);
    }
    this.stats.written += writes.length;
  }

  snapshot(): DriftStoreStats {
    return { ...this.stats, droppedAtStart: [...this.stats.droppedAtStart] };
  }
}
