/**
 * `npm run bench:backfill`: a historian backfill of a generated CSV (default 200 MB, one loop at
 * 1 s) through the real pipeline (server/pipeline.ts: embedded broker, ingest, trackers, live
 * assessment, history writer into a throw-away MariaDB, server/backfill) while live telemetry
 * flows from a publisher process. A plain script (no assertions); loopback only; every process
 * it starts stops by itself.
 *
 * Reported: the server process's RSS before the backfill (median over the live-only phase) and
 * its peak while the backfill runs (the growth must stay under 100 MB: the file is streamed,
 * never held whole); the live pipeline's publish-to-ingest latency (each sample is stamped with
 * the publisher's Date.now() at the publish; same machine and clock) before, during and after
 * the backfill; and the backfill's rate in samples/s and MB/s.
 *
 * Flags: --mb M (200) --loops L live loops (200) --hz R per live loop (5) --live-seconds S live-only
 *        phase before and after the backfill (30) --warmup S (10) --max-seconds S (cancel the
 *        backfill after S s and report the part read: for a machine too busy to finish the file)
 */
import { spawn } from "node:child_process";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { monitorEventLoopDelay } from "node:perf_hooks";
import { quantile, runBench } from "./bench-support";
import { startBenchDatabase } from "./bench-database";

const here = import.meta.dirname;
const root = path.resolve(here, "../..");
const DEVICE = { keyId: "bench-gw", secret: "bench-gw-secret-0123456789", clientId: "bench-gw" };

function flag(name: string, def: number): number {
  const i = process.argv.indexOf(`--${name}`);
  if (i < 0) return def;
  const v = Number(process.argv[i + 1]);
  if (!Number.isFinite(v) || v <= 0) throw new Error(`--${name} needs a positive number`);
  return v;
}

/** A first-order plant under PI control with set-point steps and noise: enough for a tracker to learn. */
class Plant {
  y = 50;
  private integ = 40;
  private k = 0;
  constructor(private seed: number) {}
  private noise(): number {
    // xorshift32, uniform in [-0.5, 0.5)
    this.seed ^= this.seed << 13;
    this.seed ^= this.seed >>> 17;
    this.seed ^= this.seed << 5;
    return (this.seed >>> 0) / 2 ** 32 - 0.5;
  }
  next(): { sp: number; pv: number; mv: number } {
    const sp = [50, 58, 46, 55][Math.floor(this.k++ / 300) % 4]!;
    const e = sp - this.y;
    this.integ += (0.8 * e) / 20;
    const mv = Math.min(100, Math.max(0, 0.8 * e + this.integ + 0.5 * this.noise()));
    this.y = 0.93 * this.y + 0.07 * 1.2 * mv + 0.2 * this.noise();
    return { sp, pv: this.y, mv };
  }
}

// ---------------------------------------------------------------- live publisher process
async function publisherMain(): Promise<void> {
  const mqtt = (await import("mqtt")).default;
  const [url, loopsArg, hzArg] = process.argv.slice(process.argv.indexOf("--publisher") + 1);
  const loops = Number(loopsArg);
  const hz = Number(hzArg);
  const c = await mqtt.connectAsync(url!, { username: DEVICE.keyId, password: DEVICE.secret, clientId: DEVICE.clientId, reconnectPeriod: 0 });
  (c.stream as unknown as { setNoDelay?: (v: boolean) => void }).setNoDelay?.(true);
  c.on("close", () => process.exit(0)); // the bench (and its broker) is gone
  const plants = Array.from({ length: loops }, (_, i) => new Plant(1 + i));
  let sent = 0;
  const timer = setInterval(() => {
    for (let i = 0; i < loops; i++) {
      const s = plants[i]!.next();
      c.publish(`rg/bench-works/plant-1/fic-${String(i + 1).padStart(4, "0")}/samples`, JSON.stringify([{ t: Date.now(), sp: s.sp, pv: +s.pv.toFixed(4), mv: +s.mv.toFixed(4), mode: "auto" }]), { qos: 0 });
      sent++;
    }
  }, 1000 / hz);
  process.on("SIGTERM", () => {
    clearInterval(timer);
    process.stdout.write(`SENT ${sent}\n`);
    void c.endAsync().then(() => process.exit(0));
  });
  process.stdout.write("READY\n");
  setTimeout(() => process.exit(0), 60 * 60_000).unref(); // never outlive a stuck parent
}

// ---------------------------------------------------------------- the server side
/** Write `mb` MB of a 1 s historian export ending two hours ago; returns the file, its rows and bytes. */
function writeCsv(file: string, mb: number): { rows: number; bytes: number; fromT: number; toT: number } {
  const target = mb * 1e6;
  const fd = fs.openSync(file, "w");
  const plant = new Plant(12345);
  // rows are at least 30 bytes: starting this far back, the file reaches its size before its end time
  const end = Math.floor(Date.now() / 1000) - 2 * 3600;
  const start = end - Math.ceil(target / 30);
  let bytes = fs.writeSync(fd, "t,sp,pv,mv,mode\n");
  let buf: string[] = [];
  let n = 0;
  for (let t = start; bytes < target && t <= end; t++) {
    const s = plant.next();
    buf.push(`${t},${s.sp},${s.pv.toFixed(4)},${s.mv.toFixed(4)},auto`);
    n++;
    if (buf.length === 10_000) {
      bytes += fs.writeSync(fd, buf.join("\n") + "\n");
      buf = [];
    }
  }
  if (buf.length) bytes += fs.writeSync(fd, buf.join("\n") + "\n");
  fs.closeSync(fd);
  return { rows: n, bytes, fromT: start * 1000, toT: (start + n - 1) * 1000 };
}

async function createRows(sequelize: import("sequelize").Sequelize, loops: number, pepper: string) {
  const { initModels } = await import("@/models");
  const { hashDeviceSecret } = await import("@/lib/devices");
  const m = initModels(sequelize);
  const tenant = await m.Tenant.create({ slug: "bench-works", name: "Bench Works" });
  const site = await m.Site.create({ tenantId: tenant.id, slug: "plant-1", name: "Plant 1" });
  const loop = (tag: string, slug: string) => ({
    tenantId: tenant.id, siteId: site.id, areaId: null, tag, slug, description: "bench loop", kind: "flow" as const, units: "m3/h",
    pvLo: 0, pvHi: 100, mvLimitLo: null, mvLimitHi: null, telemetryPeriodS: 1, controllerPeriodS: 1, gainValue: 0.8, tiValue: 20,
    tfS: null, derivativeAlpha: null, cascadeMasterLoopId: null, na: 1, nb: 1, nk: 1, estimationPeriodS: 1, estimationProposedS: null, baselineTimeConstantS: null,
  });
  const rows = [];
  for (let i = 1; i <= loops; i++) rows.push(loop(`FIC-${String(i).padStart(4, "0")}`, `fic-${String(i).padStart(4, "0")}`));
  await m.Loop.bulkCreate(rows);
  const target = await m.Loop.create(loop("TIC-7001", "tic-7001"));
  await m.DeviceCredential.create({ tenantId: tenant.id, siteId: site.id, name: "bench gateway", clientId: DEVICE.clientId, keyId: DEVICE.keyId, secretHash: hashDeviceSecret(DEVICE.secret, pepper), createdBy: null });
  return { tenantId: tenant.id, backfillLoopId: target.id };
}

const ms = (xs: number[]) => {
  xs.sort((a, b) => a - b);
  return `p50 ${quantile(xs, 0.5)} ms, p99 ${quantile(xs, 0.99)} ms, max ${xs.at(-1) ?? null} ms (n ${xs.length})`;
};
const mib = (b: number) => `${(b / 2 ** 20).toFixed(0)} MiB`;
const sleep = (t: number) => new Promise((r) => setTimeout(r, t));

async function main(): Promise<void> {
  const maxS = process.argv.includes("--max-seconds") ? flag("max-seconds", 1) : null;
  const opts = { mb: flag("mb", 200), loops: Math.round(flag("loops", 200)), hz: flag("hz", 5), liveS: flag("live-seconds", 30), warmupS: flag("warmup", 10) };
  const { getConfig } = await import("@/lib/config");
  const { Bus, systemClock } = await import("@/server/context");
  const { startPipeline } = await import("@/server/pipeline");
  const { TELEMETRY_WILDCARD } = await import("@/lib/domain/telemetry");
  const { MQTT_URL: _ignored, ...env } = process.env;
  const config = getConfig({ ...env, SIMULATORS: "false" });
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-bfbench-"));
  const db = await startBenchDatabase({ name: "rg_bfbench" });
  try {
    console.log(`backfill bench: ${opts.mb} MB CSV of one loop at 1 s, while ${opts.loops} live loops x ${opts.hz} Hz = ${opts.loops * opts.hz} samples/s flow; ${os.cpus().length} CPUs, load average ${os.loadavg().map((v) => v.toFixed(2)).join(" ")}`);
    const { tenantId, backfillLoopId } = await createRows(db.sequelize, opts.loops, config.DEVICE_SECRET_PEPPER);
    const csv = path.join(dir, "historian-export.csv");
    const t0 = Date.now();
    const file = writeCsv(csv, opts.mb);
    console.log(`  generated ${file.rows} rows, ${(file.bytes / 1e6).toFixed(1)} MB in ${((Date.now() - t0) / 1000).toFixed(1)} s (${new Date(file.fromT).toISOString()} .. ${new Date(file.toT).toISOString()})`);

    const ctx = { config, io: null, bus: new Bus(), clock: systemClock, services: new Map() };
    const p = await startPipeline(ctx, { sequelize: db.sequelize, broker: { host: "127.0.0.1", port: 0, mqttUrl: null, tls: null }, history: { partitionEveryMs: 0 } });
    type Phase = "warmup" | "before" | "during" | "after";
    let phase = "warmup" as Phase;
    const lat: Record<Phase, number[]> = { warmup: [], before: [], during: [], after: [] };
    let live = 0;
    // after the pipeline's own handler (subscribed first): the message has been through ingest
    p.broker.subscribeInternal(TELEMETRY_WILDCARD, (m) => {
      const s = m.payload.toString("latin1");
      const i = s.lastIndexOf('"t":');
      if (i >= 0) lat[phase].push(Date.now() - Number.parseInt(s.slice(i + 4), 10));
      live++;
    });
    const rss: Record<Phase, number[]> = { warmup: [], before: [], during: [], after: [] };
    const heap: Record<Phase, number[]> = { warmup: [], before: [], during: [], after: [] };
    const rssTimer = setInterval(() => {
      const m = process.memoryUsage();
      rss[phase].push(m.rss);
      heap[phase].push(m.heapUsed);
    }, 250);
    const delay = { before: monitorEventLoopDelay({ resolution: 10 }), during: monitorEventLoopDelay({ resolution: 10 }) };

    const pub = spawn(process.execPath, ["--import", "tsx", path.join(here, "backfill.bench.ts"), "--publisher", `mqtt://127.0.0.1:${p.broker.address()!.port}`, String(opts.loops), String(opts.hz)], { cwd: root, stdio: ["ignore", "pipe", "inherit"] });
    let pubOut = "";
    pub.stdout.on("data", (d: Buffer) => (pubOut += d.toString()));
    while (!pubOut.includes("READY")) await sleep(100);
    await sleep(opts.warmupS * 1000);
    phase = "before";
    delay.before.enable();
    const live0 = live;
    await sleep(opts.liveS * 1000);
    delay.before.disable();
    const liveRate = (live - live0) / opts.liveS;

    phase = "during";
    delay.during.enable();
    const cpu0 = process.cpuUsage();
    const b0 = Date.now();
    let jobId = 0;
    const cap = maxS !== null ? setTimeout(() => p.backfill.get(tenantId, jobId)?.cancel(), maxS * 1000) : null;
    // a line a minute, so that a long run shows where it is
    const ticker = setInterval(() => {
      const pr = p.backfill.get(tenantId, jobId)?.progress();
      if (pr) console.log(`  … ${((Date.now() - b0) / 1000).toFixed(0)} s: ${(pr.bytesRead / 1e6).toFixed(1)} MB read, ${pr.accepted} accepted, ${pr.samplesPerS.toFixed(0)} samples/s, rss ${mib(process.memoryUsage().rss)}`);
    }, 60_000);
    const res = await p.backfill.start(
      { tenantId, loopId: backfillLoopId, userId: null, fileName: "historian-export.csv", totalBytes: file.bytes, replaceModel: false },
      fs.createReadStream(csv, { highWaterMark: 64 * 1024 }),
      (id) => (jobId = id),
    );
    if (cap) clearTimeout(cap);
    clearInterval(ticker);
    const elapsedS = (Date.now() - b0) / 1000;
    const cpu = process.cpuUsage(cpu0);
    delay.during.disable();
    phase = "after";
    await sleep(opts.liveS * 1000);
    clearInterval(rssTimer);
    const sorted = [...rss.before].sort((a, b) => a - b);
    const base = quantile(sorted, 0.5) ?? 0;
    const peak = Math.max(...rss.during);
    const d = (h: ReturnType<typeof monitorEventLoopDelay>) => `event-loop delay p50 ${(h.percentile(50) / 1e6).toFixed(0)} ms, p99 ${(h.percentile(99) / 1e6).toFixed(0)} ms, max ${(h.max / 1e6).toFixed(0)} ms`;
    if (res.status === "cancelled") console.log(`  backfill cancelled after --max-seconds ${maxS}: ${(res.bytesRead / 1e6).toFixed(1)} of ${(file.bytes / 1e6).toFixed(1)} MB read`);
    console.log(`  backfill: status ${res.status}, accepted ${res.accepted}, rejected ${res.rejected} ${JSON.stringify(res.rejections)}, 1-minute tier only ${res.minuteOnly}, trained ${res.trained}; ${elapsedS.toFixed(1)} s = ${(res.accepted / elapsedS).toFixed(0)} samples/s, ${(res.bytesRead / 1e6 / elapsedS).toFixed(2)} MB/s; server CPU during it ${((cpu.user + cpu.system) / 1e6).toFixed(1)} s`);
    const heapBase = quantile([...heap.before].sort((a, b) => a - b), 0.5) ?? 0;
    console.log(`  server RSS: before the backfill ${mib(base)} (median of the live-only phase), peak during it ${mib(peak)}, growth ${mib(peak - base)} (target < 100 MB); V8 heap used ${mib(heapBase)} before, peak ${mib(Math.max(...heap.during))} during`);
    console.log(`  live telemetry: ${liveRate.toFixed(0)} samples/s accepted before the backfill; publish-to-ingest latency`);
    console.log(`    before the backfill: ${ms(lat.before)}; ${d(delay.before)}`);
    console.log(`    during the backfill: ${ms(lat.during)}; ${d(delay.during)}`);
    console.log(`    after the backfill:  ${ms(lat.after)}`);
    const p99 = (xs: number[]) => quantile(xs, 0.99) ?? NaN;
    console.log(`  ratio of live p99 latency during / before the backfill: ${(p99(lat.during) / p99(lat.before)).toFixed(2)}`);
    console.log(`load average at end: ${os.loadavg().map((v) => v.toFixed(2)).join(" ")}`);
    // print first, then stop: a publisher that exited by itself must not hold the figures back
    if (pub.exitCode === null && pub.signalCode === null) {
      const exited = new Promise<void>((r) => pub.once("exit", () => r()));
      pub.kill("SIGTERM");
      await Promise.race([exited, sleep(10_000)]);
    } else {
      console.log(`  (the live publisher had stopped by itself: exit code ${pub.exitCode}, signal ${pub.signalCode})`);
    }
    await p.stop();
  } finally {
    await db.stop();
    fs.rmSync(dir, { recursive: true, force: true });
  }
}

runBench(main, { "--publisher": publisherMain });
