import { z } from "zod";

/**
 * The one place where the environment is read. Every value has a working local default, so
 * `npm start` runs with no .env at all; a wrong value stops the process at start with a message
 * that names the variable. Call `loadEnv()` (server/index.ts does) before `getConfig()` in a
 * process that should see `.env*` files: Next itself reads them only inside `app.prepare()`.
 */
const bool = z
  .enum(["true", "false", "1", "0", "yes", "no"])
  .transform((v) => v === "true" || v === "1" || v === "yes");

const port = z.coerce.number().int().min(0).max(65535);

export const configSchema = z.object({
  NODE_ENV: z.enum(["development", "production", "test"]).default("development"),
  /** HTTP + Socket.IO listen address (loopback by default). */
  HOST: z.string().default("127.0.0.1"),
  PORT: port.default(3000),
  /**
   * Public origin of the console (scheme://host:port, no path), as the browser's address bar
   * shows it. Every state-changing request and every Socket.IO handshake must carry exactly this
   * Origin. Unset: NEXTAUTH_URL's origin, else http://HOST:PORT (127.0.0.1 for a wildcard HOST).
   */
  PUBLIC_ORIGIN: z
    .string()
    .url()
    .refine((v) => /^https?:$/.test(new URL(v).protocol), "must be an http:// or https:// URL")
    .refine((v) => {
      const u = new URL(v);
      return (u.pathname === "/" || u.pathname === "") && !u.search && !u.hash && !u.username;
    }, "must be an origin only (scheme, host and port), e.g. https://rimguard.example.com")
    .transform((v) => new URL(v).origin)
    .optional(),

  /** Embedded aedes broker (ignored when MQTT_URL is set). */
  MQTT_HOST: z.string().default("127.0.0.1"),
  MQTT_PORT: port.default(1884),
  /** An external broker, e.g. mqtt://127.0.0.1:1883 or mqtts://broker:8883; unset = embedded aedes. */
  MQTT_URL: z.string().optional(),
  /** Rimguard's own credential on the external broker (or in MQTT_URL as user:pass@). */
  MQTT_USERNAME: z.string().optional(),
  MQTT_PASSWORD: z.string().optional(),
  /** PEM file of the certificate(s) Rimguard's MQTT clients trust for mqtts (external broker, simulators); unset = the system store. */
  MQTT_CA_FILE: z.string().optional(),
  /** MQTT over TLS on its own port (server/broker/tls.ts): off | on | required (plain TCP off); unset = on, off in tests. */
  MQTT_TLS: z.enum(["off", "on", "required"]).optional(),
  MQTTS_HOST: z.string().optional(),
  MQTTS_PORT: port.default(8884),
  /** PEM certificate and key for mqtts; unset = a self-signed demo pair under MQTT_TLS_DIR. */
  MQTT_TLS_CERT: z.string().optional(),
  MQTT_TLS_KEY: z.string().optional(),
  MQTT_TLS_DIR: z.string().default(".data"),

  /** MariaDB: private server under .data/ unless DB_EXTERNAL is true. */
  DB_HOST: z.string().default("127.0.0.1"),
  DB_PORT: port.default(3307),
  DB_NAME: z.string().regex(/^[A-Za-z0-9_]+$/).default("rimguard"),
  DB_USER: z.string().default("rimguard"),
  DB_PASSWORD: z.string().default("rimguard-local-dev"),
  DB_DATA_DIR: z.string().default(".data/mariadb"),
  DB_EXTERNAL: bool.default(false),
  /** May the start command install Debian's mariadb-server with apt-get when mariadbd is missing? */
  DB_ALLOW_APT: bool.default(true),

  /** next-auth */
  NEXTAUTH_SECRET: z.string().min(16).default("rimguard-local-development-secret-change-me"),
  NEXTAUTH_URL: z.string().url().optional(),
  SESSION_MAX_AGE_S: z.coerce.number().int().positive().default(8 * 3600),

  /** Keyed hash for device secrets (HMAC-SHA256 key). */
  DEVICE_SECRET_PEPPER: z.string().min(16).default("rimguard-local-device-pepper-change-me"),

  /** Simulators: started by `npm start` unless false. */
  SIMULATORS: bool.default(true),
  SIM_SPEEDUP: z.coerce.number().positive().default(1),
  SIM_SEED: z.coerce.number().int().default(20261201),

  /** E-mail: in-process SMTP sink by default; a real server by SMTP_URL. */
  SMTP_URL: z.string().optional(),
  SMTP_SINK_PORT: port.default(2525),
  MAIL_FROM: z.string().default("Rimguard <alarms@rimguard.invalid>"),

  /** Object storage: in-process s3rver on loopback by default. */
  S3_ENDPOINT: z.string().url().optional(),
  S3_PORT: port.default(4569),
  S3_BUCKET: z.string().default("rimguard-step-tests"),

  /** Alarm journal (fsync'd, replayed into MariaDB after an outage). */
  ALARM_JOURNAL_PATH: z.string().default(".data/alarm-journal.ndjson"),
  ALARM_JOURNAL_MAX_BYTES: z.coerce.number().int().positive().default(64 * 1024 * 1024),

  /** History tiers. */
  HISTORY_SECOND_RETENTION_H: z.coerce.number().positive().default(6),
  HISTORY_MINUTE_RETENTION_D: z.coerce.number().positive().default(180),

  LOG_LEVEL: z.enum(["debug", "info", "warn", "error"]).default("info"),
});

export type Config = z.infer<typeof configSchema>;

let cached: Config | null = null;

/** Parse the environment once; throws an Error naming each bad variable. */
export function getConfig(env: NodeJS.ProcessEnv = process.env): Config {
  if (cached && env === process.env) return cached;
  const parsed = configSchema.safeParse(env);
  if (!parsed.success) {
    const lines = parsed.error.issues.map((i) => `  ${i.path.join(".")}: ${i.message}`);
    throw new Error(`Invalid Rimguard configuration:\n${lines.join("\n")}`);
  }
  if (env === process.env) cached = parsed.data;
  return parsed.data;
}

/** Forget the cached config (tests change the environment between suites). */
export function resetConfigCache(): void {
  cached = null;
}

/**
 * The origin browsers use for the console (the Origin check of writes and of Socket.IO, links in
 * e-mail), normalised as browsers send it (lower-case host, default port left out).
 */
export function publicOrigin(cfg: Config = getConfig()): string {
  if (cfg.PUBLIC_ORIGIN) return cfg.PUBLIC_ORIGIN;
  if (cfg.NEXTAUTH_URL) return new URL(cfg.NEXTAUTH_URL).origin;
  const host = cfg.HOST === "0.0.0.0" || cfg.HOST === "::" ? "127.0.0.1" : cfg.HOST;
  return new URL(`http://${host.includes(":") ? `[${host}]` : host}:${cfg.PORT}`).origin;
}
