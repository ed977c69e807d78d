/**
 * `npm run simulate`: the plant simulators as a process. Loads the scenario, builds the fleet
 * (the demo seed's loops unless --no-seed, plus the scenario's inline loops), connects one MQTT
 * client per tenant with its device credential and publishes telemetry until stopped (SIGINT /
 * SIGTERM) or until --duration has passed. Options: see ./options.ts.
 *
 * Started by the server (server/simulators-process.ts) it has an IPC channel to it and ends when
 * that channel closes: the kernel closes it when the server dies, even by SIGKILL, so no orphan
 * keeps publishing into the next server. A second simulator for devices another live simulator
 * already publishes as is refused (./device-lock.ts).
 */
import fs from "node:fs";
import path from "node:path";
import { loadEnv } from "@/lib/load-env";
import { acquireDeviceLocks } from "./device-lock";
import { buildFleet } from "./fleet";
import { parseSimulatorOptions } from "./options";
import { connectPublisher, type DeviceCredential } from "./publisher";
import { SimulatorRunner } from "./runner";
import { connectSparkplugPublisher } from "./sparkplug-publisher";
import { loadScenario, type InlineLoop } from "./scenario";

async function main(): Promise<void> {
  loadEnv();
  const opts = parseSimulatorOptions(process.argv.slice(2), process.env, path.join(import.meta.dirname, "scenarios", "demo.json"));
  const scenario = await loadScenario(opts.scenarioFile);
  let loops: InlineLoop[] = [];
  let credentials: Record<string, DeviceCredential> = {};
  if (opts.useSeed) {
    const seed = await import("./seed-loops");
    loops = seed.demoSimLoops();
    credentials = seed.demoDeviceCredentials();
  }
  if (opts.credentials) credentials = { ...credentials, ...opts.credentials };
  const sims = buildFleet({
    scenario,
    loops,
    seed: scenario.seed ?? opts.seed,
    loopMultiplier: opts.loopMultiplier,
    rateMultiplier: opts.rateMultiplier,
  });
  if (sims.length === 0) throw new Error(`scenario ${opts.scenarioFile} has no loops to simulate`);
  // one credential per site ("tenant/site") or per tenant ("tenant"); only those in use connect
  const needed = new Map<string, DeviceCredential>();
  const missing = new Set<string>();
  for (const s of sims) {
    const siteKey = `${s.config.tenantSlug}/${s.config.siteSlug}`;
    const key = credentials[siteKey] ? siteKey : s.config.tenantSlug;
    const cred = credentials[key];
    if (cred) needed.set(key, cred);
    else missing.add(siteKey);
  }
  if (missing.size > 0) throw new Error(`no device credential for ${[...missing].join(", ")} (set SIM_DEVICE_CREDENTIALS)`);
  const lock = acquireDeviceLocks(
    path.resolve(process.env.SIM_LOCK_DIR || ".data"),
    opts.brokerUrl,
    [...needed.values()].map((c) => c.clientId),
  );
  let ca: Buffer | undefined;
  if (opts.caFile) {
    try {
      ca = fs.readFileSync(opts.caFile);
    } catch (e) {
      throw new Error(`cannot read the broker certificate to trust (${opts.caFile}): ${(e as Error).message}`);
    }
  }
  const publisher =
    opts.protocol === "sparkplug"
      ? await connectSparkplugPublisher(opts.brokerUrl, Object.fromEntries(needed), { qos: opts.qos, ...(ca ? { ca } : {}) })
      : await connectPublisher(opts.brokerUrl, Object.fromEntries(needed), { qos: opts.qos, ...(ca ? { ca } : {}) });
  // SIM_BATCH_DELAY_MS: longest wait of a partial batch (load runs: long enough to fill --batch)
  const batchDelay = Number(process.env.SIM_BATCH_DELAY_MS ?? "");
  const runner = new SimulatorRunner({
    sims,
    publish: (t, p) => publisher.publish(t, p),
    speedup: opts.speedup,
    batchSize: opts.batchSize,
    stamp: opts.stamp,
    ...(Number.isFinite(batchDelay) && batchDelay > 0 ? { maxBatchDelayMs: batchDelay } : {}),
  });
  const rate = sims.reduce((s, l) => s + 1 / l.config.telemetryPeriodS, 0) * opts.speedup;
  console.log(
    `[simulators] scenario "${scenario.name}": ${sims.length} loops, ${rate.toFixed(1)} samples/s, speed-up ${opts.speedup}, batch ${opts.batchSize}, ${opts.protocol === "sparkplug" ? "Sparkplug B" : "JSON"}, broker ${opts.brokerUrl}`,
  );
  const timer = setInterval(() => runner.tick(), opts.tickMs);
  const report = setInterval(() => {
    console.log(`[simulators] sent ${runner.samples} samples in ${runner.messages} messages; errors ${runner.publishErrors + publisher.errors}; dropped ${runner.dropped}`);
  }, 60_000);
  report.unref();
  let stopping = false;
  const stop = async (why: string) => {
    if (stopping) return;
    stopping = true;
    // With the broker gone (it lived in the dead parent) closing may wait on nothing: cap it.
    setTimeout(() => process.exit(0), 3_000).unref();
    clearInterval(timer);
    clearInterval(report);
    runner.flush();
    await publisher.close();
    lock.release();
    console.log(`[simulators] stopped (${why}): ${runner.samples} samples in ${runner.messages} messages; largest lag behind the clock ${runner.maxLagMs} ms`);
    process.exit(0);
  };
  process.on("SIGINT", () => void stop("SIGINT"));
  process.on("SIGTERM", () => void stop("SIGTERM"));
  if (process.channel) {
    process.once("disconnect", () => void stop("the server process is gone"));
    process.channel.unref();
  }
  if (opts.durationS > 0) setTimeout(() => void stop(`duration ${opts.durationS} s`), opts.durationS * 1000);
}

main().catch((e: unknown) => {
  console.error(`[simulators] ${(e as Error).message}`);
  process.exit(1);
});
