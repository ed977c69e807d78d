/**
 * The embedded broker's gatekeeping (docs/architecture.md §5): CONNECT rate limits per address and
 * per address+key id, device credentials (HMAC-keyed secrets, client id bound to the credential),
 * the publish ACL (a credential publishes only under its own tenant and site, in the JSON
 * telemetry topic or a namespace such as Sparkplug B), no subscriptions, and the revocation sweep.
 */
import type net from "node:net";
import type { AedesOptions, Client } from "aedes";
import { RateLimiterMemory } from "rate-limiter-flexible";
import { parseTelemetryTopic, type RejectReason } from "@/lib/domain/telemetry";
import type { ServerContext } from "@/server/context";
import { UNAUTHENTICATED, type DeviceIdentity, type IngestCounters } from "@/server/ingest/counters";
import { CachedCredentials, clientIdAllowed, secretMatches, type DeviceCredential } from "./credentials";
import type { BrokerOptions } from "./types";

/** CONNACK return codes (MQTT 3.1.1 §3.2.2.3). */
const IDENTIFIER_REJECTED = 2;
const SERVER_UNAVAILABLE = 3;
const BAD_USERNAME_OR_PASSWORD = 4;

function authError(message: string, returnCode: number) {
  return Object.assign(new Error(message), { returnCode });
}

export interface Refusals {
  connect: number;
  rateLimited: number;
  tooLarge: number;
  publish: number;
  subscribe: number;
}

export type AuthHooks = Pick<AedesOptions, "preConnect" | "authenticate" | "authorizePublish" | "authorizeSubscribe">;

export interface BrokerGate {
  hooks: AuthHooks;
  refusals: Refusals;
  identityOf(client: Client | null): DeviceIdentity;
  countReject(device: DeviceIdentity, reason: RejectReason): void;
  forget(client: Client): void;
  /** Drop connected devices whose credential was revoked or changed; returns the cancel handle. */
  startRevocationSweep(everyMs: number): { cancel(): void };
}

export function createBrokerGate(ctx: ServerContext, opts: BrokerOptions, counters: IngestCounters): BrokerGate {
  const credentials = new CachedCredentials(opts.credentials, ctx.clock, opts.credentialTtlMs ?? 5_000);
  const pepper = ctx.config.DEVICE_SECRET_PEPPER;
  const perIp = new RateLimiterMemory({ points: opts.perIp?.points ?? 30, duration: opts.perIp?.durationS ?? 10 });
  const perKeyPoints = opts.perKey?.points ?? 20;
  const perKey = new RateLimiterMemory({ points: perKeyPoints, duration: opts.perKey?.durationS ?? 60 });
  const identities = new WeakMap<Client, { device: DeviceIdentity; cred: DeviceCredential }>();
  /** Authenticated clients, for the revocation sweep. */
  const clients = new Set<Client>();
  const refusals: Refusals = { connect: 0, rateLimited: 0, tooLarge: 0, publish: 0, subscribe: 0 };
  const namespaces = opts.namespaces ?? [];
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

  const hooks: AuthHooks = {
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
      const ns = namespaces.find((n) => n.owns(packet.topic));
      if (ns) {
        if (packet.retain && !ns.allowsRetained?.(packet.topic)) return refuse("retained", "retained messages are not accepted");
        const no = ns.authorize(packet.topic, id.cred);
        if (no) return refuse(no.reason, no.why);
        touch(id.cred.keyId);
        return done(null);
      }
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
  };

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

  return {
    hooks,
    refusals,
    identityOf,
    countReject,
    forget: (c) => clients.delete(c),
    startRevocationSweep: (everyMs) => ctx.clock.setInterval(() => void sweepRevoked(), everyMs),
  };
}

export function deviceOf(cred: DeviceCredential): DeviceIdentity {
  return { key: cred.keyId, tenantId: cred.tenantId, tenantSlug: cred.tenantSlug, siteSlug: cred.siteSlug };
}

function remoteAddressOf(client: Client): string {
  const conn = client.conn as Partial<net.Socket>;
  return conn.remoteAddress ?? "unknown";
}
