/**
 * The MQTT boundary (docs/architecture.md §1, §5, §9). By default an embedded aedes broker on
 * MQTT_HOST:MQTT_PORT (loopback); with MQTT_URL set, a client of that external broker instead.
 * Either way the rest of the server sees the same thing: `subscribeInternal(pattern, handler)`
 * delivers each telemetry message in-process with the identity of the device that sent it.
 * Browsers never talk MQTT; devices may publish telemetry and nothing else.
 */
import net from "node:net";
import { Aedes, type AedesPublishPacket, type Client } from "aedes";
import { RateLimiterMemory } from "rate-limiter-flexible";
import type { Service, ServerContext } from "@/server/context";
import { MAX_PAYLOAD_BYTES, parseTelemetryTopic, type RejectReason } from "@/lib/domain/telemetry";
import { IngestCounters, UNAUTHENTICATED, type DeviceIdentity } from "@/server/ingest/counters";
import { CachedCredentials, clientIdAllowed, secretMatches, type CredentialLookup, type DeviceCredential } from "./credentials";
import { FrameGuard } from "./frame-guard";
import { topicMatches } from "./topic-match";
import { listenTls, tlsListenerFromConfig, type TlsListenerOptions } from "./tls";
import { EXTERNAL_BROKER, externalOptionsFromConfig, startExternalBroker } from "./external";

export { hashDeviceSecret, StaticCredentials, CachedCredentials, clientIdAllowed, type DeviceCredential, type CredentialLookup } from "./credentials";

export interface BrokerMessage {
  topic: string;
  payload: Buffer;
  device: DeviceIdentity;
  dup: boolean;
  retain: boolean;
}
export type BrokerMessageHandler = (msg: BrokerMessage) => void;

export { EXTERNAL_BROKER };
export const INTERNAL_PUBLISHER: DeviceIdentity = { key: "(internal)", tenantId: null, tenantSlug: null, siteSlug: null };

export interface BrokerOptions {
  /** Where credentials come from (the pipeline passes the database lookup). */
  credentials: CredentialLookup;
  /** Counters shared with ingest, so refusals at the broker are counted per device too. */
  counters?: IngestCounters;
  host?: string;
  /** 0 = any free port (tests). */
  port?: number;
  /** External broker URL; overrides the embedded broker (default: config MQTT_URL). */
  mqttUrl?: string | null;
  credentialTtlMs?: number;
  /** CONNECT attempts allowed per source address per window. */
  perIp?: { points: number; durationS: number };
  /**
   * Failed CONNECTs (wrong secret, unknown key, client id not bound) allowed per source address
   * and key id together per window; past it, that address may not try that key id until the
   * window ends. Counted only after the secret was checked, so the right secret from another
   * address (the real gateway) is never locked out by a stranger's guesses.
   */
  perKey?: { points: number; durationS: number };
  /** How often connected devices are re-checked for revocation (ms). */
  revocationSweepMs?: number;
  /** mqtts listener (server/broker/tls.ts); default from the configuration, null = none. */
  tls?: TlsListenerOptions | null;
}

export interface BrokerService extends Service {
  /** The embedded broker, or null when an external broker is used. */
  readonly broker: Aedes | null;
  address(): { host: string; port: number } | null;
  /** The mqtts listener's address, when TLS is on. */
  tlsAddress?(): { host: string; port: number } | null;
  publishInternal(topic: string, payload: Buffer | string): Promise<void>;
  subscribeInternal(pattern: string, handler: BrokerMessageHandler): () => void;
}

/** CONNACK return codes (MQTT 3.1.1 §3.2.2.3). */
const IDENTIFIER_REJECTED = 2;
const SERVER_UNAVAILABLE = 3;
const BAD_USERNAME_OR_PASSWORD = 4;

function authError(message: string, returnCode: number) {
  return Object.assign(new Error(message), { returnCode });
}

/** A packet may exceed the 64 KiB payload only by its topic and header fields. */
const MAX_REMAINING_LENGTH = MAX_PAYLOAD_BYTES + 1024;

export async function startBroker(ctx: ServerContext, opts: BrokerOptions): Promise<BrokerService> {
  const url = opts.mqttUrl === undefined ? ctx.config.MQTT_URL : opts.mqttUrl;
  if (url) return startExternalBroker(externalOptionsFromConfig(ctx.config, url));
  return startEmbedded(ctx, opts);
}

async function startEmbedded(ctx: ServerContext, opts: BrokerOptions): Promise<BrokerService> {
  const cfg = ctx.config;
  const counters = opts.counters ?? new IngestCounters();
  const credentials = new CachedCredentials(opts.credentials, ctx.clock, opts.credentialTtlMs ?? 5_000);
  const pepper = cfg.DEVICE_SECRET_PEPPER;
  const perIp = new RateLimiterMemory({ points: opts.perIp?.points ?? 30, duration: opts.perIp?.durationS ?? 10 });
  const perKeyPoints = opts.perKey?.points ?? 20;
  const perKey = new RateLimiterMemory({ points: perKeyPoints, duration: opts.perKey?.durationS ?? 60 });
  const identities = new WeakMap<Client, { device: DeviceIdentity; cred: DeviceCredential }>();
  /** Authenticated clients, for the revocation sweep. */
  const clients = new Set<Client>();
  const handlers = new Set<{ pattern: string; fn: BrokerMessageHandler }>();
  const refusals = { connect: 0, rateLimited: 0, tooLarge: 0, publish: 0, subscribe: 0 };
  const now = () => ctx.clock.now();
  const identityOf = (client: Client | null) => (client ? identities.get(client)?.device : undefined) ?? UNAUTHENTICATED;
  const countReject = (device: DeviceIdentity, reason: RejectReason) => counters.reject(device, reason, now());
  // "Last seen" for the admin's device list, written at most once a minute per device.
  const lastTouch = new Map<string, number>();
  const touch = (keyId: string) => {
    const t = now();
    if (!opts.credentials.touch || t - (lastTouch.get(keyId) ?? -Infinity) < 60_000) return;
    lastTouch.set(keyId, t);
    opts.credentials.touch(keyId, t).catch(() => lastTouch.delete(keyId));
  };

  const broker = await Aedes.createBroker({
    // A device that has not completed CONNECT within 10 s is dropped (common practice: short).
    connectTimeout: 10_000,
    maxClientsIdLength: 128,
    maxTopicLevels: 8,

    preConnect(client, _packet, done) {
      const ip = remoteAddressOf(client);
      perIp.consume(ip).then(
        () => done(null, true),
        () => {
          refusals.rateLimited++;
          done(authError(`too many connection attempts from ${ip}`, SERVER_UNAVAILABLE), false);
        },
      );
    },

    authenticate(client, username, password, done) {
      const refuse = (why: string, code: number) => {
        refusals.connect++;
        done(authError(why, code), null);
      };
      if (!username || !password) return refuse("credentials required", BAD_USERNAME_OR_PASSWORD);
      const failKey = `${remoteAddressOf(client)}|${username}`;
      const failed = () => void perKey.consume(failKey).catch(() => undefined);
      void (async () => {
        const spent = await perKey.get(failKey);
        if (spent && spent.consumedPoints >= perKeyPoints) {
          refusals.rateLimited++;
          return refuse(`too many failed connection attempts for key ${username} from this address`, SERVER_UNAVAILABLE);
        }
        let cred: DeviceCredential | null;
        try {
          cred = await credentials.find(username);
        } catch (err) {
          console.error("[broker] credential lookup failed:", err);
          return refuse("credential store unavailable", SERVER_UNAVAILABLE);
        }
        if (!cred || cred.revoked || !secretMatches(pepper, password, cred.secretHash)) {
          failed();
          if (cred) countReject(deviceOf(cred), "unauthorised");
          return refuse("bad username or password", BAD_USERNAME_OR_PASSWORD);
        }
        if (!clientIdAllowed(client.id, cred)) {
          failed();
          countReject(deviceOf(cred), "unauthorised");
          return refuse(`client id not bound to credential ${cred.keyId}`, IDENTIFIER_REJECTED);
        }
        identities.set(client, { device: deviceOf(cred), cred });
        clients.add(client);
        touch(cred.keyId);
        done(null, true);
      })().catch((err: unknown) => {
        console.error("[broker] authentication failed:", err);
        refuse("authentication failed", SERVER_UNAVAILABLE);
      });
    },

    authorizePublish(client, packet, done) {
      if (client === null) return done(null); // the server's own publishes
      const id = identities.get(client);
      const device = id?.device ?? UNAUTHENTICATED;
      const refuse = (reason: RejectReason, why: string) => {
        refusals.publish++;
        countReject(device, reason);
        done(new Error(why));
      };
      if (!id) return refuse("unauthorised", "not authenticated");
      if (packet.topic.startsWith("$")) return refuse("bad-topic", "$ topics are reserved for the broker");
      // Telemetry is a stream, not a state: a retained sample would be replayed as new data.
      if (packet.retain) return refuse("retained", "retained messages are not accepted");
      const topic = parseTelemetryTopic(packet.topic);
      if (!topic) return refuse("bad-topic", "topic must be rg/<tenant>/<site>/<loop>/samples");
      if (topic.tenantSlug !== id.cred.tenantSlug || (id.cred.siteSlug !== null && topic.siteSlug !== id.cred.siteSlug)) {
        return refuse("wrong-tenant", "topic outside the credential's tenant or site");
      }
      touch(id.cred.keyId);
      done(null);
    },

    authorizeSubscribe(client, sub, done) {
      // Devices only publish telemetry; the server consumes in-process. SUBACK 0x80 (§3.9.3).
      refusals.subscribe++;
      countReject(identityOf(client), "unauthorised");
      void sub;
      done(null, null);
    },
  });

  broker.on("publish", (packet: AedesPublishPacket, client: Client | null) => {
    if (handlers.size === 0 || packet.topic.startsWith("$")) return;
    const msg: BrokerMessage = {
      topic: packet.topic,
      payload: packet.payload as Buffer,
      device: client ? identityOf(client) : INTERNAL_PUBLISHER,
      dup: packet.dup === true,
      retain: packet.retain === true,
    };
    for (const h of handlers) {
      if (!topicMatches(h.pattern, msg.topic)) continue;
      try {
        h.fn(msg);
      } catch (err) {
        console.error("[broker] message handler failed:", err);
      }
    }
  });
  broker.on("clientError", (c: Client, e: Error) => {
    if (process.env.RG_DEBUG_BROKER) console.info("[broker] client error", c.id, e.message);
    /* a device's protocol error closes its connection; nothing else to do */
  });

  const sockets = new Set<net.Socket>();
  const onSocket = (socket: net.Socket) => {
    socket.setNoDelay(true); // Nagle adds 15-50 ms tails at high per-connection rates (§11)
    sockets.add(socket);
    socket.on("close", () => sockets.delete(socket));
    socket.on("error", () => socket.destroy());
    const client = broker.handle(socket);
    const guard = new FrameGuard(MAX_REMAINING_LENGTH, (why, len) => {
      if (process.env.RG_DEBUG_BROKER) console.info("[broker] frame guard", client.id, why, len);
      refusals.tooLarge++;
      countReject(identityOf(client), why === "too-large" ? "too-large" : "bad-json");
      socket.destroy();
    });
    // With a 'readable' listener (aedes) in charge, 'data' fires for each chunk as it is read,
    // before the MQTT parser appends it.
    socket.on("data", (chunk: Buffer) => {
      guard.push(chunk);
    });
  };
  const tlsOpts = opts.tls !== undefined ? opts.tls : tlsListenerFromConfig(cfg, cfg.MQTT_TLS_DIR);
  // TLS required: no plain listener at all, so a gateway without TLS cannot connect
  const server = net.createServer(onSocket);
  if (tlsOpts?.mode !== "required") {
    await new Promise<void>((resolve, reject) => {
      server.once("error", reject);
      server.listen(opts.port ?? cfg.MQTT_PORT, opts.host ?? cfg.MQTT_HOST, () => {
        server.off("error", reject);
        resolve();
      });
    });
  }
  const tlsServer = tlsOpts ? await listenTls(tlsOpts, onSocket) : null;

  // Connected devices whose credential was revoked (or changed) are dropped within one sweep.
  const sweep = ctx.clock.setInterval(() => {
    void sweepRevoked();
  }, opts.revocationSweepMs ?? 5_000);
  broker.on("clientDisconnect", (c) => clients.delete(c));
  async function sweepRevoked(): Promise<void> {
    for (const c of [...clients]) {
      if (c.closed) {
        clients.delete(c);
        continue;
      }
      const id = identities.get(c);
      if (!id) continue;
      try {
        const cur = await credentials.find(id.cred.keyId);
        if (!cur || cur.revoked || !cur.secretHash.equals(id.cred.secretHash) || cur.tenantId !== id.cred.tenantId || cur.siteSlug !== id.cred.siteSlug) {
          c.close();
        }
      } catch {
        /* store unavailable: keep the connection, try again next sweep */
      }
    }
  }

  let stopped = false;
  const address = () => {
    const a = server.address();
    return a && typeof a === "object" ? { host: a.address, port: a.port } : null;
  };
  const tlsAddress = () => {
    const a = tlsServer?.address();
    return a && typeof a === "object" ? { host: a.address, port: a.port } : null;
  };
  return {
    name: "broker",
    broker,
    address,
    tlsAddress,
    async publishInternal(topic, payload) {
      await new Promise<void>((resolve, reject) =>
        broker.publish(
          { cmd: "publish", topic, payload: typeof payload === "string" ? Buffer.from(payload) : payload, qos: 0, retain: false, dup: false },
          (err) => (err ? reject(err) : resolve()),
        ),
      );
    },
    subscribeInternal(pattern, fn) {
      const h = { pattern, fn };
      handlers.add(h);
      return () => handlers.delete(h);
    },
    health() {
      return {
        status: stopped ? "down" : "ok",
        detail: { mode: "embedded", address: address(), tls: tlsOpts ? { mode: tlsOpts.mode, address: tlsAddress() } : null, connectedClients: broker.connectedClients, refusals: { ...refusals } },
      };
    },
    async stop() {
      if (stopped) return;
      stopped = true;
      sweep.cancel();
      await new Promise<void>((resolve) => {
        if (server.listening) server.close(() => resolve());
        else resolve();
        tlsServer?.close();
        for (const s of sockets) s.destroy();
      });
      await new Promise<void>((resolve) => broker.close(() => resolve()));
    },
  };
}

function deviceOf(cred: DeviceCredential): DeviceIdentity {
  return { key: cred.keyId, tenantId: cred.tenantId, tenantSlug: cred.tenantSlug, siteSlug: cred.siteSlug };
}

function remoteAddressOf(client: Client): string {
  const conn = client.conn as Partial<net.Socket>;
  return conn.remoteAddress ?? "unknown";
}
