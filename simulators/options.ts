/**
 * Simulator process options: command-line flags override environment variables, which override
 * the defaults. Validated with zod; a bad value stops the process with a message naming it.
 *
 *   --scenario <file>   SIM_SCENARIO          scenario JSON (default simulators/scenarios/demo.json)
 *   --speedup <x>       SIM_SPEEDUP           simulated seconds per wall second (default 1)
 *   --seed <n>          SIM_SEED              run seed (the scenario's own seed wins when set)
 *   --loops <n>         SIM_LOOP_MULTIPLIER   run each loop n times (synthetic clones, load runs)
 *   --rate <x>          SIM_RATE_MULTIPLIER   divide every sample period by x (load runs)
 *   --batch <n>         SIM_BATCH             samples per MQTT message, 1..500 (default 1)
 *   --duration <s>      SIM_DURATION_S        stop by itself after s wall seconds (0 = run on)
 *   --tick-ms <ms>      SIM_TICK_MS           wall interval between simulation ticks (default 50)
 *   --broker <url>      MQTT_URL              broker URL (default mqtt://MQTT_HOST:MQTT_PORT, or
 *                                             mqtts://MQTTS_HOST:MQTTS_PORT when MQTT_TLS=required)
 *   --ca <file>         MQTT_CA_FILE          PEM certificate to trust for mqtts (default with MQTT_TLS=required:
 *                                             the broker's own, MQTT_TLS_CERT or the demo's self-signed one)
 *   --qos <0|1>         SIM_QOS               MQTT QoS of telemetry (default 0)
 *   --stamp <mode>      SIM_STAMP             "simulated" (default) or "publish" (load runs; see runner.ts)
 *   --protocol <p>      SIM_PROTOCOL          "json" (default: rg/.../samples) or "sparkplug" (Sparkplug B, see sparkplug-publisher.ts)
 *   --no-seed           SIM_NO_SEED=true      use only the scenario's inline loops
 *   (credentials)       SIM_DEVICE_CREDENTIALS JSON { "tenant/site" or tenant: { username, password, clientId } }
 */
import { z } from "zod";
import { getConfig, type Config } from "@/lib/config";
import { brokerCertificatePath, tlsModeOf } from "@/server/broker/tls";

const FLAGS: Record<string, string> = {
  "--scenario": "SIM_SCENARIO",
  "--speedup": "SIM_SPEEDUP",
  "--seed": "SIM_SEED",
  "--loops": "SIM_LOOP_MULTIPLIER",
  "--rate": "SIM_RATE_MULTIPLIER",
  "--batch": "SIM_BATCH",
  "--duration": "SIM_DURATION_S",
  "--tick-ms": "SIM_TICK_MS",
  "--broker": "MQTT_URL",
  "--ca": "MQTT_CA_FILE",
  "--qos": "SIM_QOS",
  "--stamp": "SIM_STAMP",
  "--protocol": "SIM_PROTOCOL",
};

const credentialSchema = z.object({ username: z.string().min(1), password: z.string().min(1), clientId: z.string().min(1) });

const schema = z.object({
  SIM_SCENARIO: z.string().min(1).optional(),
  SIM_LOOP_MULTIPLIER: z.coerce.number().int().min(1).max(100_000).default(1),
  SIM_RATE_MULTIPLIER: z.coerce.number().positive().max(1000).default(1),
  SIM_BATCH: z.coerce.number().int().min(1).max(500).default(1),
  SIM_DURATION_S: z.coerce.number().nonnegative().default(0),
  SIM_TICK_MS: z.coerce.number().int().min(5).max(5000).default(50),
  SIM_QOS: z.enum(["0", "1"]).default("0").transform((v) => (v === "1" ? 1 : 0) as 0 | 1),
  SIM_STAMP: z.enum(["simulated", "publish"]).default("simulated"),
  SIM_PROTOCOL: z.enum(["json", "sparkplug"]).default("json"),
  SIM_NO_SEED: z.enum(["true", "false", "1", "0"]).default("false").transform((v) => v === "true" || v === "1"),
  SIM_DEVICE_CREDENTIALS: z
    .string()
    .optional()
    .transform((s, ctx) => {
      if (!s) return undefined;
      try {
        return z.record(z.string(), credentialSchema).parse(JSON.parse(s));
      } catch (e) {
        ctx.addIssue({ code: "custom", message: `must be JSON { "tenant/site" or tenant: { username, password, clientId } }: ${(e as Error).message}` });
        return z.NEVER;
      }
    }),
});

export interface SimulatorOptions {
  scenarioFile: string;
  speedup: number;
  seed: number;
  loopMultiplier: number;
  rateMultiplier: number;
  batchSize: number;
  durationS: number;
  tickMs: number;
  brokerUrl: string;
  /** PEM file of the certificate to trust for mqtts (verification is never skipped); null = the system store. */
  caFile: string | null;
  qos: 0 | 1;
  stamp: "simulated" | "publish";
  protocol: "json" | "sparkplug";
  useSeed: boolean;
  credentials: Record<string, z.infer<typeof credentialSchema>> | undefined;
}

/** Merge argv flags into a copy of the environment (flags win); throws on an unknown flag. */
export function argvToEnv(argv: string[], env: NodeJS.ProcessEnv): NodeJS.ProcessEnv {
  const out: NodeJS.ProcessEnv = { ...env };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i]!;
    if (a === "--no-seed") {
      out.SIM_NO_SEED = "true";
      continue;
    }
    const [flag, inline] = a.includes("=") ? [a.slice(0, a.indexOf("=")), a.slice(a.indexOf("=") + 1)] : [a, undefined];
    const name = FLAGS[flag];
    if (!name) throw new Error(`unknown option ${a} (known: ${Object.keys(FLAGS).join(", ")}, --no-seed)`);
    const value = inline ?? argv[++i];
    if (value === undefined) throw new Error(`option ${flag} needs a value`);
    out[name] = value;
  }
  return out;
}

export function parseSimulatorOptions(argv: string[], env: NodeJS.ProcessEnv, defaultScenario: string): SimulatorOptions {
  const merged = argvToEnv(argv, env);
  const cfg = getConfig(merged);
  const r = schema.safeParse(merged);
  if (!r.success) {
    throw new Error(`Invalid simulator options:\n${r.error.issues.map((i) => `  ${i.path.join(".")}: ${i.message}`).join("\n")}`);
  }
  const o = r.data;
  return {
    scenarioFile: o.SIM_SCENARIO ?? defaultScenario,
    speedup: cfg.SIM_SPEEDUP,
    seed: cfg.SIM_SEED,
    loopMultiplier: o.SIM_LOOP_MULTIPLIER,
    rateMultiplier: o.SIM_RATE_MULTIPLIER,
    batchSize: o.SIM_BATCH,
    durationS: o.SIM_DURATION_S,
    tickMs: o.SIM_TICK_MS,
    ...brokerOf(cfg),
    qos: o.SIM_QOS,
    stamp: o.SIM_STAMP,
    protocol: o.SIM_PROTOCOL,
    useSeed: !o.SIM_NO_SEED,
    credentials: o.SIM_DEVICE_CREDENTIALS,
  };
}

/**
 * Where the simulators connect: MQTT_URL as given; else the embedded broker, over mqtts when it
 * requires TLS (it has no plain listener then), trusting the broker's certificate by its file.
 */
export function brokerOf(cfg: Config): { brokerUrl: string; caFile: string | null } {
  if (cfg.MQTT_URL) return { brokerUrl: cfg.MQTT_URL, caFile: cfg.MQTT_CA_FILE ?? null };
  if (tlsModeOf(cfg) !== "required") return { brokerUrl: `mqtt://${cfg.MQTT_HOST}:${cfg.MQTT_PORT}`, caFile: cfg.MQTT_CA_FILE ?? null };
  const host = cfg.MQTTS_HOST ?? cfg.MQTT_HOST;
  // a wildcard listen address is reached on loopback, which the demo certificate names
  const connectHost = host === "0.0.0.0" || host === "::" ? "127.0.0.1" : host;
  return { brokerUrl: `mqtts://${connectHost.includes(":") ? `[${connectHost}]` : connectHost}:${cfg.MQTTS_PORT}`, caFile: cfg.MQTT_CA_FILE ?? brokerCertificatePath(cfg) };
}
