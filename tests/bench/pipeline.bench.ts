/**
 * `npm run bench:pipeline`: N loops x R Hz of simulated telemetry through the real broker into the
 * trackers and out to a Socket.IO client in another process. A plain script (no assertions, no
 * timing inside the test suite); loopback only; every process it starts stops by itself.
 *
 *   phase 1 "bare broker": the same simulator process and payloads into an embedded aedes whose
 *           in-process subscriber only parses the JSON (the ceiling of this machine's intake);
 *   phase 2 "pipeline":    embedded broker with device authentication (server/broker), ingest
 *           (server/ingest), tracker registry (server/tracking), realtime emitter and watch
 *           (server/realtime) on a Socket.IO server, history aggregation and batch writer
 *           (server/history) into a throw-away MariaDB (unless --no-history); a client process
 *           watches W loops.
 *
 * Reported: offered and delivered samples/s, loss, p50/p99 latency on `loop:samples` from the
 * publish to the client's receipt, timed on the last sample of each MQTT message (the simulator
 * stamps samples with their simulated instants, --stamp simulated, so trackers and history see the
 * real time axis; the last sample of a full batch is published in the tick that produced it; an
 * earlier variant restamped every sample at the publish, which squeezed a batch into a few ms
 * and understated the tracker and history work), CPU and RSS per process, event-loop delay, and
 * the pipeline-to-bare ratios (delivered rate, server CPU per sample). The Socket.IO handshake here sets the tenant directly (the session
 * cookie check of the real server is not what is measured).
 *
 * Phase 4 (unless --no-backfill) runs the backfill bench on a 20 MB file: the backfill's rate in
 * samples/s while live telemetry flows, with the live latency before/during.
 *
 * Flags: --loops N (default 5000) --hz R (10) --batch B (10) --seconds D (20) --warmup S (5; latency
 *        quantiles are printed for every sample and for the samples stamped S s after the first) --watch W (50)
 *        --state-every S (tracker state period in telemetry seconds, default 1) --with-states (the
 *        client also joins its tenant room and receives the `loop:state` batches) --sparkplug (phase 3:
 *        the same pipeline fed by the simulators' Sparkplug B mode, births then report-by-exception
 *        DDATA by alias, decoded by server/sparkplug; printed beside phase 2 with the ratio)
 *        --steady (steady-state mode: default --seconds 300; figures over the first 20 s and over
 *        the last --tail F of the run, default 0.5; the bare-broker phase runs 30 s)
 *        --no-assessment (leave out the live routine assessment, ./pipeline-steady.ts)
 */
import { spawn } from "node:child_process";
import { mkdtempSync, rmSync } from "node:fs";
import { createServer } from "node:http";
import net from "node:net";
import os from "node:os";
import path from "node:path";
import { monitorEventLoopDelay } from "node:perf_hooks";
import { piTuning, testLoopConfig } from "@/tests/helpers/loop-config";
import { procStats, runBench } from "./bench-support";
import { startBenchDatabase } from "./bench-database";
import { BenchAssessment, describeSteady, SteadyMarks } from "./pipeline-steady";
import { bare, batchDelayMs, clientMain, delaySummary, flag, here, Latencies, root, runSimulator, watchChild, withoutMqttUrl, writeScenario, type SimRun } from "./pipeline-parts";

async function pipeline(scenarioFile: string, opts: { loops: number; hz: number; batch: number; seconds: number; warmup: number; watch: number; stateEvery: number; withStates: boolean; history: boolean; assessment: boolean; protocol?: "json" | "sparkplug" }) {
  const { Server } = await import("socket.io");
  const { getConfig } = await import("@/lib/config");
  const { Bus, systemClock } = await import("@/server/context");
  const { startBroker, StaticCredentials, hashDeviceSecret } = await import("@/server/broker");
  const { Ingest, LoopDirectory } = await import("@/server/ingest");
  const { TrackerRegistry } = await import("@/server/tracking/registry");
  const { startRealtimeEmitter } = await import("@/server/realtime/emitter");
  const { installWatch } = await import("@/server/realtime/watch");
  const { tenantRoom } = await import("@/lib/domain/events");
  const { slugify } = await import("@/lib/domain/slug");
  const { cloneTag } = await import("@/simulators/fleet");
  const { startHistory } = await import("@/server/history");
  type Ctx = import("@/server/context").ServerContext;

  const config = getConfig(withoutMqttUrl(process.env));
  const http = createServer();
  const io = new Server(http, { transports: ["websocket"], destroyUpgrade: false }) as unknown as NonNullable<Ctx["io"]>;
  io.use((socket, next) => {
    socket.data = { userId: 1, tenantId: 1, role: "viewer" };
    next();
  });
  io.on("connection", (socket) => {
    socket.on("bench:states" as never, () => void socket.join(tenantRoom(1)));
  });
  await new Promise<void>((r) => http.listen(0, "127.0.0.1", r));
  const httpPort = (http.address() as net.AddressInfo).port;
  const ctx: Ctx = { config, io, bus: new Bus(), clock: systemClock, services: new Map() };

  const cred = {
    keyId: "bench-key",
    tenantId: 1,
    tenantSlug: "sim-lab",
    siteId: null,
    siteSlug: null,
    clientId: "rg-sim-bench",
    secretHash: hashDeviceSecret(config.DEVICE_SECRET_PEPPER, "bench-secret-0123456789"),
    revoked: false,
  };
  const sparkplugMode = opts.protocol === "sparkplug";
  const { SparkplugHost } = await import("@/server/sparkplug/host");
  const { SPARKPLUG_WILDCARD } = await import("@/server/sparkplug/topic");
  const { simulatorSparkplugIds } = await import("@/lib/domain/sparkplug");
  let sparkplug: InstanceType<typeof SparkplugHost> | null = null;
  const namespace = { owns: (t: string) => t.startsWith("spBv1.0/"), authorize: (t: string, c: { tenantId: number }) => sparkplug?.namespace().authorize(t, c as never) ?? null };
  const broker = await startBroker(ctx, { credentials: new StaticCredentials([cred]), host: "127.0.0.1", port: 0, mqttUrl: null, namespaces: sparkplugMode ? [namespace] : [], tls: null });
  const routes = [];
  const configs = [];
  for (let i = 0; i < opts.loops; i++) {
    const tag = cloneTag("FIC-900", i);
    routes.push({ loopId: i + 1, tenantId: 1, siteId: 1, tenantSlug: "sim-lab", siteSlug: "bench-1", loopSlug: slugify(tag) });
    const T = 1 / opts.hz;
    configs.push(
      testLoopConfig({
        id: i + 1,
        tag,
        telemetryPeriodS: T,
        controllerPeriodS: T,
        // decimated to about 0.5 s, as the product's period proposal would for this plant
        estimationPeriodS: Math.max(T, Math.round(0.5 / T) * T),
        controller: piTuning(1.5, 15),
        na: 1,
        nb: 2,
        nk: 5,
      }),
    );
  }
  const db = opts.history ? await startBenchDatabase({ name: "rg_bench", foreignKeyChecks: false }) : null;
  const history = db ? await startHistory(ctx, { sequelize: db.sequelize, partitionEveryMs: 0 }) : null;
  const dbCpu0 = db ? (procStats(db.pid)?.cpuS ?? 0) : 0;
  let dbPeakRss = 0;
  const dbTimer = db
    ? setInterval(() => {
        dbPeakRss = Math.max(dbPeakRss, procStats(db.pid)?.rss ?? 0);
      }, 250)
    : null;
  const registry = new TrackerRegistry(ctx, configs, { stateEveryS: opts.stateEvery });
  const assessment = opts.assessment ? new BenchAssessment(configs.map((c) => ({ loopId: c.id, tag: c.tag, periodS: c.telemetryPeriodS, kp: c.controller.kp, ti: c.controller.ti ?? Number.POSITIVE_INFINITY }))) : null;
  const emitter = startRealtimeEmitter(ctx);
  let updates = 0;
  ctx.bus.on("tracker:update", (s) => {
    updates++;
    emitter.state(s);
    history?.addState(s);
  });
  const perLoopAccepted = new Map<number, number>();
  const ingestLat = new Latencies(opts.warmup * 1000);
  const ingestDirectory = new LoopDirectory(routes);
  const ingest = new Ingest({
    directory: ingestDirectory,
    now: () => Date.now(),
    sink: (route, samples, at) => {
      registry.push(route.loopId, samples, at);
      emitter.samples(route.loopId, samples);
      history?.addSamples(route.loopId, samples);
      assessment?.push(route.loopId, samples);
      perLoopAccepted.set(route.loopId, (perLoopAccepted.get(route.loopId) ?? 0) + samples.length);
      const lastSample = samples[samples.length - 1];
      if (lastSample) ingestLat.add(lastSample.t, at);
    },
  });
  let accepted = 0;
  let rejected = 0;
  let first = 0;
  let last = 0;
  const unsubscribe = broker.subscribeInternal("rg/+/+/+/samples", (msg) => {
    const o = ingest.handle(msg);
    const now = Date.now();
    if (accepted === 0) first = now;
    last = now;
    accepted += o.accepted;
    for (const n of Object.values(o.rejected)) rejected += n ?? 0;
  });
  // Sparkplug B: the simulators' ids (lib/domain/sparkplug.ts), groups and mappings held in memory
  let spTick: ReturnType<typeof setInterval> | null = null;
  let unsubscribeSp: () => void = () => undefined;
  if (sparkplugMode) {
    // the bench's credential is tenant-wide ("sim-lab"): one edge node "sim", devices "<site>.<loop>"
    const mappings = routes.map((r) => ({ loopId: r.loopId, tenantId: 1, ...simulatorSparkplugIds(r.tenantSlug, r.siteSlug, r.loopSlug, false), sp: "SP", pv: "PV", mv: "MV", mode: "MODE" }));
    sparkplug = new SparkplugHost({
      store: { loadGroups: async () => new Map([["sim-lab", 1]]), loadMappings: async () => mappings, loadBirths: async () => [], saveBirths: async () => undefined },
      ingest,
      counters: ingest.counters,
      directory: ingestDirectory,
      registry,
      now: () => Date.now(),
    });
    await sparkplug.start();
    unsubscribeSp = broker.subscribeInternal(SPARKPLUG_WILDCARD, (msg) => {
      const before = ingest.counters.totals().acceptedSamples;
      sparkplug!.handle(msg);
      const now = Date.now();
      const n = ingest.counters.totals().acceptedSamples - before;
      if (n > 0 && accepted === 0) first = now;
      if (n > 0) last = now;
      accepted += n;
    });
    spTick = setInterval(() => sparkplug!.tick(), 1000);
  }
  const unwatch = installWatch(io, { loopTenant: (id) => (id >= 1 && id <= opts.loops ? 1 : null) });
  const tick = registry.startTimer(1000);

  const client = spawn(process.execPath, ["--import", "tsx", path.join(here, "pipeline.bench.ts"), "--client", `http://127.0.0.1:${httpPort}`, String(opts.watch), String(opts.loops), opts.withStates ? "1" : "0", String(opts.warmup), String(opts.batch)], {
    cwd: root,
    stdio: ["ignore", "pipe", "inherit"],
  });
  const clientStats = watchChild(client);
  let clientOut = "";
  client.stdout!.on("data", (d: Buffer) => (clientOut += d.toString()));
  const deadline = Date.now() + 60_000;
  while (!clientOut.includes("READY") && Date.now() < deadline) await new Promise((r) => setTimeout(r, 100));
  if (!clientOut.includes("READY")) throw new Error("bench client did not connect");

  const addr = broker.address();
  if (!addr) throw new Error("embedded broker has no address");
  const cpu0 = process.cpuUsage();
  const loopDelay = monitorEventLoopDelay({ resolution: 10 });
  loopDelay.enable();
  const marks = new SteadyMarks(() => ({ accepted, dbCpuS: db ? (procStats(db.pid)?.cpuS ?? null) : null, assessMs: assessment?.spentMs ?? 0 }));
  const sim = await runSimulator(addr.port, scenarioFile, opts);
  if (spTick) clearInterval(spTick);
  if (sparkplugMode) rejected = Object.values(ingest.counters.totals().rejected).reduce((x, y) => x + y, 0);
  marks.stop();
  assessment?.stop();
  await new Promise((r) => setTimeout(r, 2000)); // drain: emitter flushes every 200/500 ms
  emitter.flush();
  await new Promise((r) => setTimeout(r, 500));
  loopDelay.disable();
  const cpu = process.cpuUsage(cpu0);
  const serverRss = process.memoryUsage().rss;
  const dbCpuS = db ? (procStats(db.pid)?.cpuS ?? dbCpu0) - dbCpu0 : null;
  if (dbTimer) clearInterval(dbTimer);
  const clientCpuBefore = clientStats.last();
  client.kill("SIGTERM");
  await new Promise<void>((r) => client.once("exit", () => r()));
  const m = /RESULT (.*)/.exec(clientOut);
  const clientResult = m ? (JSON.parse(m[1]!) as { received: number; timed: number; perLoop: Record<string, number>; p50: number | null; p99: number | null; max: number | null; steadyN: number; steadyP50: number | null; steadyP99: number | null; steadyMax: number | null; states: number; cpuS: number; rss: number }) : null;
  let watchedAccepted = 0;
  for (const id of Object.keys(clientResult?.perLoop ?? {})) watchedAccepted += perLoopAccepted.get(Number(id)) ?? 0;

  tick.cancel();
  unwatch();
  unsubscribe();
  unsubscribeSp();
  emitter.stop();
  let historyStats: ReturnType<NonNullable<typeof history>["writer"]["stats"]> | null = null;
  if (history) {
    await history.stop();
    historyStats = history.writer.stats();
  }
  await db?.stop();
  await broker.stop();
  await new Promise<void>((r) => io.close(() => r()));
  return {
    sim,
    ingest: ingestLat.summary(),
    accepted,
    rejected,
    spanS: (last - first) / 1000,
    updates,
    serverCpuS: (cpu.user + cpu.system) / 1e6,
    serverRss,
    loopDelay: delaySummary(loopDelay),
    dbCpuS,
    dbPeakRss,
    historyStats,
    client: clientResult,
    clientPeakRss: clientCpuBefore.peakRss,
    watchedAccepted,
    marks,
    assessmentRuns: assessment?.runs ?? null,
    assessmentSteady: assessment?.steadyCost() ?? null,
  };
}

async function main(): Promise<void> {
  const opts = {
    loops: Math.round(flag("loops", 5000)),
    hz: flag("hz", 10),
    batch: Math.round(flag("batch", 10)),
    seconds: flag("seconds", 20),
    warmup: flag("warmup", 5),
    watch: Math.round(flag("watch", 50)),
    stateEvery: flag("state-every", 1),
    withStates: process.argv.includes("--with-states"),
    history: !process.argv.includes("--no-history"),
    assessment: !process.argv.includes("--no-assessment"),
    steady: process.argv.includes("--steady"),
    tail: 0.5,
  };
  if (opts.steady) {
    opts.seconds = flag("seconds", 300);
    opts.tail = Math.min(1, flag("tail", 0.5));
  }
  const dir = mkdtempSync(path.join(os.tmpdir(), "rg-bench-"));
  try {
    const scenario = writeScenario(dir);
    const offered = opts.loops * opts.hz;
    console.log(`pipeline bench: ${opts.loops} loops x ${opts.hz} Hz = ${offered} samples/s offered for ${opts.seconds} s; batch ${opts.batch} samples per MQTT message (partial batches wait up to ${batchDelayMs(opts)} ms); ${os.cpus().length} CPUs, load average ${os.loadavg().map((v) => v.toFixed(2)).join(" ")}`);
    console.log(`latency: from the stamp of the last sample of each MQTT message (samples carry the epoch ms of their simulated instant, so the time axis the trackers and history see is real; the last one of a batch is produced at most one simulator tick, 20 ms, plus the simulator's lag before the publish, so the figure is never short of publish-to-receipt) to receipt (Date.now() in the receiving process), same machine and clock; the wait of the earlier samples for their batch to fill is not counted; "steady" = samples stamped >= ${opts.warmup} s after the first one (process start-up, broker connection and JIT excluded), "all" = every sample`);
    const lat = (l: { p50: number | null; p99: number | null; max: number | null; steadyN: number; steadyP50: number | null; steadyP99: number | null; steadyMax: number | null }) =>
      `steady p50 ${l.steadyP50} ms, p99 ${l.steadyP99} ms, max ${l.steadyMax} ms (n ${l.steadyN}); all p50 ${l.p50} ms, p99 ${l.p99} ms, max ${l.max} ms`;
    const perMsg = (r: SimRun) => (r.messages > 0 ? (r.sent / r.messages).toFixed(1) : "n/a");

    console.log("phase 1: bare broker (aedes + in-process JSON.parse)");
    const b = await bare(scenario, opts.steady ? { ...opts, seconds: Math.min(30, opts.seconds) } : opts);
    // delivered rate over the span from the first to the last receipt
    const bareRate = b.spanS > 0 ? b.received / b.spanS : 0;
    if (b.sim.sent === 0) console.log(`  simulator: ${b.sim.lastLine}`);
    console.log(`  simulator sent ${b.sim.sent} samples in ${b.sim.messages} messages (${perMsg(b.sim)} per message; cpu ${b.sim.cpuS.toFixed(1)} s, peak rss ${(b.sim.peakRss / 2 ** 20).toFixed(0)} MiB); largest lag behind schedule ${b.sim.lagMs} ms`);
    console.log(`  broker received ${b.received} (${b.sim.sent - b.received} lost) = ${bareRate.toFixed(0)} samples/s over ${b.spanS.toFixed(1)} s from first to last receipt; publish-to-subscriber latency (last sample of each message) ${lat(b.lat)}; broker process cpu ${b.brokerCpuS.toFixed(1)} s, ${b.loopDelay}`);

    console.log(`phase 2: pipeline (authenticated broker -> ingest -> trackers -> Socket.IO client process${opts.history ? "; history aggregation and writer into a throw-away MariaDB, foreign-key checks off as it holds no loop rows" : "; no history (--no-history)"})`);
    const p = await pipeline(scenario, opts);
    const rate = p.spanS > 0 ? p.accepted / p.spanS : 0;
    const loss = p.sim.sent - p.accepted;
    console.log(`  simulator sent ${p.sim.sent} samples in ${p.sim.messages} messages (${perMsg(p.sim)} per message; cpu ${p.sim.cpuS.toFixed(1)} s, peak rss ${(p.sim.peakRss / 2 ** 20).toFixed(0)} MiB, largest lag behind schedule ${p.sim.lagMs} ms)`);
    console.log(`  ingest accepted ${p.accepted}, rejected ${p.rejected}, lost ${loss} = ${rate.toFixed(0)} samples/s sustained over ${p.spanS.toFixed(1)} s from first to last receipt; tracker updates ${p.updates}`);
    console.log(`  publish-to-ingest latency (last sample of each message) ${lat(p.ingest)}`);
    console.log(`  server process cpu ${p.serverCpuS.toFixed(1)} s over ~${(opts.seconds + 2.5).toFixed(0)} s (${((100 * p.serverCpuS) / (opts.seconds + 2.5)).toFixed(0)} % of one core), rss ${(p.serverRss / 2 ** 20).toFixed(0)} MiB, ${p.loopDelay}`);
    if (p.client) {
      console.log(
        `  client (${opts.watch} watched loops): received ${p.client.received} of ${p.watchedAccepted} accepted for them (${p.watchedAccepted - p.client.received} missing); loop:samples publish-to-client latency (last sample of each message, ${p.client.timed} timed) ${lat(p.client)}; loop:state summaries ${p.client.states}; cpu ${p.client.cpuS.toFixed(1)} s, rss ${(p.client.rss / 2 ** 20).toFixed(0)} MiB`,
      );
    } else {
      console.log("  client produced no result");
    }
    console.log(`ratio pipeline / bare broker, delivered samples/s: ${bareRate > 0 ? (rate / bareRate).toFixed(3) : "n/a"}`);
    const bareCost = b.received > 0 ? (1e6 * b.brokerCpuS) / b.received : NaN;
    const pipeCost = p.accepted > 0 ? (1e6 * p.serverCpuS) / p.accepted : NaN;
    console.log(`server CPU per sample: bare broker ${bareCost.toFixed(1)} us, pipeline ${pipeCost.toFixed(1)} us, ratio ${(pipeCost / bareCost).toFixed(2)}`);
    // marks every 5 s while the simulator runs (the drain after it is left out)
    console.log(`  ${describeSteady("first 20 s", p.marks.head(20, opts.assessment))}`);
    console.log(`  ${describeSteady(`last ${(100 * opts.tail).toFixed(0)} %`, p.marks.tail(opts.tail, opts.assessment))}`);
    if (p.assessmentRuns !== null) console.log(`  live assessment: ${p.assessmentRuns} assessments run in the run (LiveAssessor, 250 ms timer, 15 ms budget; a loop's first runs come while its window fills, so a run of minutes reads the start-up cost)`);
    if (p.assessmentSteady) {
      const a = p.assessmentSteady;
      const inRun = p.marks.tail(opts.tail, true);
      const withoutInRun = inRun ? inRun.serverUsPerSample - (inRun.assessUsPerSample ?? 0) : NaN;
      console.log(
        `  live assessment in the long run (full windows): push ${a.pushUs.toFixed(3)} us/sample + one full-window run ${a.fullRunMs.toFixed(1)} ms every ${a.samplesBetweenRuns} samples = ${a.perSampleUs.toFixed(3)} us/sample (target <= 2 us); ratio to the pipeline's cost without it (last part, ${withoutInRun.toFixed(2)} us/sample) ${(a.perSampleUs / withoutInRun).toFixed(3)}`,
      );
    }
    if (p.historyStats) {
      const h = p.historyStats;
      console.log(
        `  MariaDB process cpu ${p.dbCpuS?.toFixed(1)} s, peak rss ${(p.dbPeakRss / 2 ** 20).toFixed(0)} MiB; history rows written samples_1s ${h.written.samples_1s}, samples_1m ${h.written.samples_1m}, pole_snapshots ${h.written.pole_snapshots}, loop_states ${h.written.loop_states}; shed ${JSON.stringify(h.shed)}; queued at stop ${JSON.stringify(h.queued)}; write errors ${h.errors}${h.lastError ? ` (last: ${String(h.lastError).slice(0, 160)})` : ""}`,
      );
    } else {
      console.log("  MariaDB: not run (--no-history)");
    }
    if (process.argv.includes("--sparkplug")) {
      console.log("phase 3: the same pipeline fed by Sparkplug B (simulators --protocol sparkplug: births, then DDATA by alias with the changed metrics; server/sparkplug decodes, resamples to the loop period, then the same ingest)");
      const sp = await pipeline(scenario, { ...opts, protocol: "sparkplug" });
      const spRate = sp.spanS > 0 ? sp.accepted / sp.spanS : 0;
      console.log(`  simulator sent ${sp.sim.sent} samples in ${sp.sim.messages} messages; ingest accepted ${sp.accepted}, rejected ${sp.rejected} = ${spRate.toFixed(0)} samples/s over ${sp.spanS.toFixed(1)} s; server cpu ${sp.serverCpuS.toFixed(1)} s (${sp.accepted > 0 ? ((1e6 * sp.serverCpuS) / sp.accepted).toFixed(1) : "n/a"} us per sample)`);
      console.log(`ratio Sparkplug B / JSON intake, delivered samples/s (same run): ${rate > 0 ? (spRate / rate).toFixed(3) : "n/a"}`);
    }
    console.log(`load average at end: ${os.loadavg().map((v) => v.toFixed(2)).join(" ")}`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
  if (!process.argv.includes("--no-backfill")) await runBackfillPhase();
}

/** Phase 4: the backfill rate while live telemetry flows, by the backfill bench on a 20 MB file (its own pipeline and database). */
async function runBackfillPhase(): Promise<void> {
  console.log("phase 4: historian backfill while live telemetry flows (tests/bench/backfill.bench.ts --mb 20; --no-backfill skips it; npm run bench:backfill runs 200 MB)");
  const args = ["--import", "tsx", path.join(import.meta.dirname, "backfill.bench.ts"), "--mb", "20", "--loops", "200", "--hz", "5", "--live-seconds", "15", "--warmup", "5"];
  const child = spawn(process.execPath, args, { stdio: "inherit" });
  const code = await new Promise<number | null>((resolve) => child.on("exit", resolve));
  if (code !== 0) console.log(`  the backfill phase exited with code ${code}`);
}

runBench(main, { "--client": clientMain });
