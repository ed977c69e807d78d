/**
 * Batched pushes to browsers (docs/architecture.md §8, a contract): `loop:state` to each tenant's room
 * at most every 500 ms with the latest summary (LoopStateBrief, ./summary.ts) of every loop that
 * changed; with it, `loop:detail` with the latest full LoopStateDto of each changed loop to that
 * loop's room (only sockets watching the loop sit there); and full-rate `loop:samples` to a
 * loop's room every 200 ms. One emit per update would cap near 170k/s
 * (§11); one per tenant per period does not. A tenant's batch holds only its own loops, and only
 * sockets admitted by watch.ts sit in a loop's room, so no client sees another tenant's data.
 * A batch for a room nobody is in is dropped unencoded (newcomers load the current states over
 * HTTP and get every loop's next summary within its state period).
 */
import { loopRoom, siteRoom, tenantRoom } from "@/lib/domain/events";
import type { LoopStateBrief, LoopStateDto, SampleDto } from "@/lib/domain/types";
import type { ServerContext } from "@/server/context";
import { toLoopBrief } from "./summary";

export interface RealtimeEmitterOptions {
  stateEveryMs?: number;
  samplesEveryMs?: number;
  /** Samples kept per loop between flushes (a burst beyond this keeps the newest). */
  maxSamplesPerLoop?: number;
  /** The site of a loop, for the site rooms of site-scoped members. */
  loopSite?: (loopId: number) => number | null;
}

export interface RealtimeEmitter {
  state(state: LoopStateDto): void;
  samples(loopId: number, samples: readonly SampleDto[]): void;
  /** Emit everything pending now (tests). */
  flush(): void;
  stats(): { stateBatches: number; statesSent: number; detailsSent: number; sampleBatches: number; samplesSent: number; samplesDropped: number };
  stop(): void;
}

export function startRealtimeEmitter(ctx: ServerContext, opts: RealtimeEmitterOptions = {}): RealtimeEmitter {
  const pendingStates = new Map<number, Map<number, LoopStateDto>>();
  const pendingSamples = new Map<number, SampleDto[]>();
  const maxPerLoop = opts.maxSamplesPerLoop ?? 5_000;
  const stats = { stateBatches: 0, statesSent: 0, detailsSent: 0, sampleBatches: 0, samplesSent: 0, samplesDropped: 0 };

  const roomSize = (room: string) => ctx.io?.sockets.adapter.rooms.get(room)?.size ?? 0;

  const flushStates = () => {
    const io = ctx.io;
    if (!io || pendingStates.size === 0) return;
    for (const [tenantId, byLoop] of pendingStates) {
      if (byLoop.size === 0) continue;
      // the full state of each changed loop to the sockets watching it (the loop detail page)
      for (const [loopId, state] of byLoop) {
        if (roomSize(loopRoom(loopId)) === 0) continue;
        io.to(loopRoom(loopId)).emit("loop:detail", state);
        stats.detailsSent++;
      }
      // site-scoped members: each site room gets its own loops' summaries
      if (opts.loopSite) {
        const bySite = new Map<number, LoopStateBrief[]>();
        for (const state of byLoop.values()) {
          const siteId = opts.loopSite(state.loopId);
          if (siteId === null || roomSize(siteRoom(siteId)) === 0) continue;
          (bySite.get(siteId) ?? bySite.set(siteId, []).get(siteId)!).push(toLoopBrief(state));
        }
        for (const [siteId, briefs] of bySite) io.to(siteRoom(siteId)).emit("loop:state", briefs);
      }
      // nobody in the tenant's room: building and encoding the batch would be wasted
      if (roomSize(tenantRoom(tenantId)) === 0) continue;
      const batch: LoopStateBrief[] = new Array(byLoop.size);
      let i = 0;
      for (const state of byLoop.values()) batch[i++] = toLoopBrief(state);
      io.to(tenantRoom(tenantId)).emit("loop:state", batch);
      stats.stateBatches++;
      stats.statesSent += batch.length;
    }
    pendingStates.clear();
  };

  const flushSamples = () => {
    const io = ctx.io;
    if (!io || pendingSamples.size === 0) return;
    for (const [loopId, samples] of pendingSamples) {
      if (samples.length === 0) continue;
      io.to(loopRoom(loopId)).emit("loop:samples", { loopId, samples });
      stats.sampleBatches++;
      stats.samplesSent += samples.length;
    }
    pendingSamples.clear();
  };

  const stateTimer = ctx.clock.setInterval(flushStates, opts.stateEveryMs ?? 500);
  const samplesTimer = ctx.clock.setInterval(flushSamples, opts.samplesEveryMs ?? 200);

  return {
    state(state) {
      let byLoop = pendingStates.get(state.tenantId);
      if (!byLoop) {
        byLoop = new Map();
        pendingStates.set(state.tenantId, byLoop);
      }
      byLoop.set(state.loopId, state);
    },
    samples(loopId, samples) {
      // Nobody watching: nothing to keep.
      if (roomSize(loopRoom(loopId)) === 0) return;
      let list = pendingSamples.get(loopId);
      if (!list) {
        list = [];
        pendingSamples.set(loopId, list);
      }
      for (const s of samples) list.push(s);
      if (list.length > maxPerLoop) {
        stats.samplesDropped += list.length - maxPerLoop;
        list.splice(0, list.length - maxPerLoop);
      }
    },
    flush() {
      flushStates();
      flushSamples();
    },
    stats: () => ({ ...stats }),
    stop() {
      stateTimer.cancel();
      samplesTimer.cancel();
      pendingStates.clear();
      pendingSamples.clear();
    },
  };
}
