/**
 * The live pipeline (docs/architecture.md §1): broker -> ingest -> tracker registry -> history and
 * realtime. Loop configurations come from MariaDB at start and on `loop:config-changed`;
 * estimator state is checkpointed every minute and at shutdown and restored at start, so a
 * restart resumes tracking instead of learning again. Started by server/services.ts.
 */
import { DEFAULT_POLICY } from "@/lib/domain/alarms/policy";
import type { AlarmApi } from "@/lib/domain/services";
import type { Sequelize } from "sequelize";
import { getSequelize } from "@/lib/data/db/sequelize";
import { loadLoopConfigs, type LoadedLoop } from "@/server/ingest/loop-source";
import { TELEMETRY_WILDCARD } from "@/lib/domain/telemetry";
import type { LoopStateDto } from "@/lib/domain/types";
import { EXTERNAL_BROKER, startBroker, type BrokerOptions, type BrokerService } from "./broker";
import { dbCredentials } from "@/lib/data/device-credentials";
import type { ServerContext, Service, ServiceHealth } from "./context";
import { loadCheckpoints, loadLoopStates, saveCheckpoints } from "@/lib/data/checkpoints";
import { startHistory, type HistoryOptions, type HistoryService } from "./history";
import {
  Ingest,
  IngestCounters,
  LoopDirectory,
  type DeviceCounters,
  type DeviceIdentity,
} from "./ingest";
import { parseTelemetryTopic } from "@/lib/domain/telemetry";
import {
  startRealtimeEmitter,
  type RealtimeEmitter,
  type RealtimeEmitterOptions,
} from "./realtime/emitter";
import { installWatch } from "./realtime/watch";
import { TrackerRegistry } from "./tracking/registry";
import { DriftCheckpointStore } from "./tracking/drift-store";
import { BackfillHost } from "./backfill/host";
import { startLiveAssessment, type LiveAssessmentService } from "./assessment/service";
import { databaseStore, SparkplugHost } from "./sparkplug/host";
import { SPARKPLUG_WILDCARD } from "./sparkplug/topic";

export interface PipelineOptions {
  sequelize?: Sequelize;
  broker?: Partial<BrokerOptions>;
  history?: Partial<Omit<HistoryOptions, "sequelize">>;
  realtime?: RealtimeEmitterOptions;
  /** Estimator checkpoint period (ms). */
  checkpointEveryMs?: number;
  /** Staleness check period (ms). */
  tickEveryMs?: number;
}

export interface IngestDiagnostics {
  devices: DeviceCounters[];
  totals: ReturnType<IngestCounters["totals"]>;
}

export interface PipelineService extends Service {
  readonly broker: BrokerService;
  readonly ingest: Ingest;
  readonly registry: TrackerRegistry;
  readonly history: HistoryService;
  readonly emitter: RealtimeEmitter;
  readonly directory: LoopDirectory;
  /** Historian backfills (server/backfill). */
  readonly backfill: BackfillHost;
  /** Routine-data findings (server/assessment). */
  readonly assessment: LiveAssessmentService;
  /** Sparkplug B ingest (server/sparkplug). */
  readonly sparkplug: SparkplugHost;
  /** Re-read Sparkplug group owners and mappings (after an admin's change). */
  reloadSparkplug(): Promise<void>;
  /** Per-device counters of one tenant (the admin diagnostics route). */
  ingestDiagnostics(tenantId: number): IngestDiagnostics;
  /** The live state of a loop, if tracked. */
  loopState(loopId: number): LoopStateDto | null;
  reloadLoop(loopId: number): Promise<void>;
  checkpointNow(): Promise<number>;
}

/** Find the running pipeline from a route handler (duck-typed: bundles may hold separate module copies). */
export function isPipelineService(s: Service | undefined): s is PipelineService {
  return (
    !!s &&
    s.name === "pipeline" &&
    typeof (s as Partial<PipelineService>).ingestDiagnostics === "function"
  );
}

/**
 * An external broker does its own device authentication and tells us nothing about the sender;
 * its traffic is counted per tenant and site of the topic, so each tenant's admin still sees it.
 */
function externalIdentity(topic: string, directory: LoopDirectory): DeviceIdentity {
  const t = parseTelemetryTopic(topic);
  if (!t) return EXTERNAL_BROKER;
  const tenantId = directory.tenantIdOf(t.tenantSlug);
  if (tenantId === null) return EXTERNAL_BROKER;
  return {
    key: `(external broker) ${t.tenantSlug}/${t.siteSlug}`,
    tenantId,
    tenantSlug: t.tenantSlug,
    siteSlug: t.siteSlug,
  };
}

export async function startPipeline(
  ctx: ServerContext,
  opts: PipelineOptions = {},
): Promise<PipelineService> {
  const sequelize = opts.sequelize ?? getSequelize(ctx.config);
  const loaded = await loadLoopConfigs(sequelize);
  const directory = new LoopDirectory(loaded.map((l) => l.route));
  const configErrors = new Map<number, string>();
  for (const l of loaded) if (l.error) configErrors.set(l.route.loopId, l.error);
  // The rim forecast runs to each loop's own decay-ratio level (the alarm service starts first).
  const alarms = ctx.services.get("alarms") as Partial<AlarmApi> | undefined;
  const registry = new TrackerRegistry(
    { bus: ctx.bus, clock: ctx.clock },
    loaded.flatMap((l) => (l.config && l.enabled ? [l.config] : [])),
    {
      alarmDecayRatio: (loopId) =>
        alarms?.policyFor ? alarms.policyFor(loopId).decayRatio.low : DEFAULT_POLICY.decayRatio.low,
    },
  );

  // Resume: estimators from their checkpoints, sample order from the last stored states.
  const { entries, corrupt } = await loadCheckpoints(sequelize);
  const restore = registry.restore(entries.filter((e) => registry.get(e.loopId)));
  // the rim forecast's drift, from its own part of the checkpoint (./tracking/drift-store.ts)
  const driftStore = new DriftCheckpointStore(sequelize);
  await driftStore.restore(registry, restore.restored);
  const lastStates = await loadLoopStates(sequelize);
  const lastStateByLoop = new Map(lastStates.map((s) => [s.loopId, s]));

  const history = await startHistory(ctx, { sequelize, ...opts.history });
  const emitter = startRealtimeEmitter(ctx, {
    loopSite: (id) => directory.get(id)?.siteId ?? null,
    ...opts.realtime,
  });
  const unwatch = ctx.io
    ? installWatch(ctx.io, {
        loopTenant: (id) => directory.get(id)?.tenantId ?? null,
        loopSite: (id) => directory.get(id)?.siteId ?? null,
      })
    : () => undefined;
  // each verdict rides in the loop's assessment from its tracker (LoopAssessment.routine)
  // and is cross-checked against that tracker's model (lib/assessment/model-check.ts)
  const assessment = await startLiveAssessment(ctx, {
    sequelize,
    onRoutine: (loopId, routine) => registry.attachRoutine(loopId, routine),
    modelOf: (loopId) => registry.get(loopId)?.current,
  });

  const onUpdate = (state: LoopStateDto) => {
    history.addState(state);
    emitter.state(state);
    assessment.recheckModel(state.loopId);
  };
  ctx.bus.on("tracker:update", onUpdate);

  // historian backfills: they write through the same writer and learn into trackers of this registry
  const backfill = new BackfillHost({
    sequelize,
    writer: history.writer,
    registry,
    bus: ctx.bus,
    clock: ctx.clock,
    secondRetentionH: ctx.config.HISTORY_SECOND_RETENTION_H,
    minuteRetentionD: ctx.config.HISTORY_MINUTE_RETENTION_D,
  });
  await backfill.recover();

  const counters = new IngestCounters();
  const ingest = new Ingest({
    directory,
    counters,
    now: () => ctx.clock.now(),
    sink: (route, samples, receivedAt) => {
      registry.push(route.loopId, samples, receivedAt);
      backfill.observeLive(route.loopId, samples, receivedAt);
      history.addSamples(route.loopId, samples);
      emitter.samples(route.loopId, samples);
      assessment.push(route.loopId, samples);
    },
    // Sparkplug store-and-forward samples: history, not live
    historySink: (route, samples) => history.addSamples(route.loopId, samples),
  });
  const sparkplug = new SparkplugHost({ store: databaseStore(sequelize), ingest, counters, directory, registry, now: () => ctx.clock.now() });
  await sparkplug.start();
  ingest.seedLastTimes(
    lastStates.flatMap((s) => (s.last ? [[s.loopId, s.last.t] as [number, number]] : [])),
  );

  const reloadLoop = async (loopId: number) => {
    const [l]: (LoadedLoop | undefined)[] = await loadLoopConfigs(sequelize, loopId);
    if (!l) {
      directory.remove(loopId);
      registry.removeLoop(loopId);
      configErrors.delete(loopId);
      return;
    }
    directory.upsert(l.route);
    if (l.error) configErrors.set(loopId, l.error);
    else configErrors.delete(loopId);
    if (l.config && l.enabled) registry.upsertLoop(l.config);
    else registry.removeLoop(loopId);
  };
  const onConfigChanged = (loopId: number) => {
    assessment
      .reloadLoop(loopId)
      .catch((err: unknown) =>
        console.error(`[pipeline] reloading the assessment of loop ${loopId} failed:`, err),
      );
    reloadLoop(loopId)
      .then(() => sparkplug.reload())
      .catch((err: unknown) => console.error(`[pipeline] reloading loop ${loopId} failed:`, err));
  };
  ctx.bus.on("loop:config-changed", onConfigChanged);

  let checkpointError: string | null = null;
  let lastCheckpoint: { at: number; loops: number } | null = null;
  // Writes run one after another, and each takes its snapshot when its turn comes: a timer-fired
  // write still in flight at shutdown must not land after (and over) the final, newer one. A
  // request made while another is still waiting for its turn shares that one (same snapshot time).
  let checkpointTail: Promise<number> = Promise.resolve(0);
  let checkpointWaiting: Promise<number> | null = null;
  const checkpointNow = (): Promise<number> => {
    if (checkpointWaiting) return checkpointWaiting;
    const run = checkpointTail.then(() => {
      checkpointWaiting = null;
      return writeCheckpoint();
    });
    checkpointWaiting = run;
    checkpointTail = run;
    return run;
  };
  const writeCheckpoint = async (): Promise<number> => {
    try {
      // the drift parts are taken at the same moment as the checkpoints (a restore checks it)
      const now = ctx.clock.now();
      const states = registry.checkpoint();
      const drift = driftStore.take(registry);
      const n = await saveCheckpoints(sequelize, states, now);
      lastCheckpoint = { at: ctx.clock.now(), loops: n };
      checkpointError = null;
      await driftStore.save(drift, now);
      return n;
    } catch (err) {
      checkpointError = err instanceof Error ? err.message : String(err);
      console.error("[pipeline] checkpoint failed:", checkpointError);
      return 0;
    }
  };

  let broker: BrokerService;
  try {
    broker = await startBroker(ctx, {
      credentials: dbCredentials(sequelize),
      counters,
      namespaces: [sparkplug.namespace()],
      ...opts.broker,
    });
  } catch (err) {
    ctx.bus.off("tracker:update", onUpdate);
    ctx.bus.off("loop:config-changed", onConfigChanged);
    unwatch();
    emitter.stop();
    await assessment.stop();
    await history.stop();
    throw err;
  }
  broker.subscribeInternal(TELEMETRY_WILDCARD, (m) => {
    ingest.handle({
      topic: m.topic,
      payload: m.payload,
      device: m.device === EXTERNAL_BROKER ? externalIdentity(m.topic, directory) : m.device,
      dup: m.dup,
      retain: m.retain,
    });
  });

  broker.subscribeInternal(SPARKPLUG_WILDCARD, (m) => void sparkplug.handle(m));

  const tickTimer = registry.startTimer(opts.tickEveryMs ?? 1_000);
  const sparkplugTimer = ctx.clock.setInterval(() => sparkplug.tick(), opts.tickEveryMs ?? 1_000);
  const sparkplugSave = ctx.clock.setInterval(() => void sparkplug.flush(), 30_000);
  const checkpointTimer = ctx.clock.setInterval(
    () => void checkpointNow(),
    opts.checkpointEveryMs ?? 60_000,
  );

  let stopped = false;
  return {
    name: "pipeline",
    broker,
    ingest,
    registry,
    history,
    emitter,
    directory,
    backfill,
    assessment,
    sparkplug,
    reloadSparkplug: () => sparkplug.reload(),
    ingestDiagnostics: (tenantId) => ({
      devices: counters.snapshot(tenantId),
      totals: counters.totals(tenantId),
    }),
    loopState: (loopId) => registry.get(loopId)?.current ?? lastStateByLoop.get(loopId) ?? null,
    reloadLoop,
    checkpointNow,
    async health(): Promise<ServiceHealth> {
      const [b, h] = await Promise.all([broker.health(), history.health()]);
      const levels = ["ok", "degraded", "critical", "down"] as const;
      let status = levels[Math.max(levels.indexOf(b.status), levels.indexOf(h.status))] ?? "ok";
      if (
        status === "ok" &&
        (checkpointError || configErrors.size > 0 || registry.rejected.size > 0)
      )
        status = "degraded";
      if (stopped) status = "down";
      return {
        status,
        detail: {
          broker: b,
          history: h,
          ingest: counters.totals(),
          realtime: emitter.stats(),
          assessment: assessment.stats(),
          sparkplug: { births: sparkplug.nodes.records().length, saveError: sparkplug.saveError },
          trackers: {
            loops: registry.size,
            routes: directory.size,
            configErrors: Object.fromEntries(configErrors),
            rejected: Object.fromEntries(registry.rejected),
            restoredAtStart: restore.restored.length,
            refusedAtStart: restore.refused,
            corruptCheckpoints: corrupt,
          },
          checkpoint: { last: lastCheckpoint, error: checkpointError, drift: driftStore.snapshot() },
        },
      };
    },
    async stop() {
      if (stopped) return;
      stopped = true;
      backfill.cancelAll();
      await broker.stop();
      tickTimer.cancel();
      sparkplugTimer.cancel();
      sparkplugSave.cancel();
      await sparkplug.flush();
      checkpointTimer.cancel();
      ctx.bus.off("loop:config-changed", onConfigChanged);
      await checkpointNow();
      ctx.bus.off("tracker:update", onUpdate);
      unwatch();
      emitter.stop();
      await assessment.stop();
      await history.stop();
    },
  };
}
