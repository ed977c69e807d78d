/**
 * The running backfills of a server: at most one per loop (a second is refused while one runs),
 * reachable by id for progress and cancellation, and told about the loop's live samples while
 * they run (server/pipeline.ts calls `observeLive` from its sink). Finished jobs stay listed for
 * a while so the console can show their outcome.
 */
import { ConflictError, NotFoundError } from "@/lib/domain/errors";
import type { SampleDto } from "@/lib/domain/types";
import type { BackfillApi, BackfillRequest } from "@/lib/domain/backfill";
import { BackfillJob, type BackfillDeps, type BackfillParams, type BackfillProgress } from "./job";
import type { ByteSource } from "./sample-csv";
import { loadLoopConfigs } from "../ingest/loop-source";
import { closeAbandonedBackfills, listBackfills, type BackfillRow } from "@/lib/data/backfill";

export type { BackfillRequest };

const KEEP_FINISHED_MS = 3_600_000;

export class BackfillHost implements BackfillApi {
  private readonly jobs = new Map<number, { job: BackfillJob; finishedAt: number | null }>();
  private readonly byLoop = new Map<number, BackfillJob>();

  constructor(private readonly deps: BackfillDeps) {}

  /** Mark jobs a previous process left running as failed (their spans stay recorded). */
  async recover(): Promise<void> {
    await closeAbandonedBackfills(this.deps.sequelize);
  }

  /**
   * Open a job (its row and id), then read `source` to the end. `onOpen` gets the id before any
   * sample is read, so the caller can report progress while it runs.
   */
  async run(
    params: BackfillParams,
    source: ByteSource,
    onOpen?: (id: number) => void,
  ): Promise<BackfillProgress> {
    const loopId = params.route.loopId;
    if (this.byLoop.has(loopId))
      throw new ConflictError(
        "A backfill of this loop is already running: wait for it or cancel it.",
      );
    const job = new BackfillJob(this.deps, params);
    this.byLoop.set(loopId, job);
    try {
      await job.open();
      this.prune();
      this.jobs.set(job.id, { job, finishedAt: null });
      onOpen?.(job.id);
      return await job.run(source);
    } finally {
      this.byLoop.delete(loopId);
      const entry = this.jobs.get(job.id);
      if (entry) entry.finishedAt = Date.now();
    }
  }

  /** Load the loop (of the tenant) and run a backfill of it: the route's entry point. */
  async start(
    req: BackfillRequest,
    source: ByteSource,
    onOpen?: (id: number) => void,
  ): Promise<BackfillProgress> {
    const [l] = await loadLoopConfigs(this.deps.sequelize, req.loopId);
    if (!l || l.route.tenantId !== req.tenantId) throw new NotFoundError("Loop");
    return this.run(
      {
        route: l.route,
        config: l.config,
        enabled: l.enabled,
        userId: req.userId,
        fileName: req.fileName,
        totalBytes: req.totalBytes,
        replaceModel: req.replaceModel,
      },
      source,
      onOpen,
    );
  }

  /** Recorded backfills of a loop, newest first, with the running one's live progress. */
  async list(
    tenantId: number,
    loopId: number,
  ): Promise<{ running: BackfillProgress | null; recorded: BackfillRow[] }> {
    const running = this.byLoop.get(loopId);
    return {
      running:
        running && running.tenantId === tenantId && running.id > 0 ? running.progress() : null,
      recorded: await listBackfills(this.deps.sequelize, tenantId, loopId),
    };
  }

  observeLive(loopId: number, samples: readonly SampleDto[], receivedAt: number): void {
    this.byLoop.get(loopId)?.observeLive(samples, receivedAt);
  }

  /** A job of the tenant, or null (another tenant's job is not there). */
  get(tenantId: number, id: number): BackfillJob | null {
    const e = this.jobs.get(id);
    return e && e.job.tenantId === tenantId ? e.job : null;
  }

  runningFor(loopId: number): BackfillJob | null {
    return this.byLoop.get(loopId) ?? null;
  }

  cancelAll(): void {
    for (const j of this.byLoop.values()) j.cancel();
  }

  private prune(): void {
    const now = Date.now();
    for (const [id, e] of this.jobs)
      if (e.finishedAt !== null && now - e.finishedAt > KEEP_FINISHED_MS) this.jobs.delete(id);
  }
}
