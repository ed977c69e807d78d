/**
 * The embedded aedes broker on MQTT_HOST:MQTT_PORT (loopback by default), with the mqtts listener
 * when TLS is on (server/broker/tls.ts). Gatekeeping is in auth-hooks.ts; every accepted message
 * goes to the one dispatch (dispatch.ts).
 */
import net from "node:net";
import { Aedes, type AedesPublishPacket, type Client } from "aedes";
import { MAX_PAYLOAD_BYTES } from "@/lib/domain/telemetry";
import type { ServerContext } from "@/server/context";
import { IngestCounters } from "@/server/ingest/counters";
import { createBrokerGate } from "./auth-hooks";
import { Dispatch } from "./dispatch";
import { FrameGuard } from "./frame-guard";
import { listenTls, tlsListenerFromConfig } from "./tls";
import { INTERNAL_PUBLISHER, type BrokerMessage, type BrokerOptions, type BrokerService } from "./types";

/** A packet may exceed the 64 KiB payload only by its topic and header fields. */
const MAX_REMAINING_LENGTH = MAX_PAYLOAD_BYTES + 1024;

export async function startEmbedded(ctx: ServerContext, opts: BrokerOptions): Promise<BrokerService> {
  const cfg = ctx.config;
  const counters = opts.counters ?? new IngestCounters();
  const gate = createBrokerGate(ctx, opts, counters);
  const { refusals, identityOf } = gate;
  const dispatch = new Dispatch();

  const broker = await Aedes.createBroker({
    // A device that has not completed CONNECT within 10 s is dropped (common practice: short).
    connectTimeout: 10_000,
    maxClientsIdLength: 128,
    maxTopicLevels: 8,
    ...gate.hooks,
  });

  broker.on("publish", (packet: AedesPublishPacket, client: Client | null) => {
    if (dispatch.size === 0 || packet.topic.startsWith("$")) return;
    const msg: BrokerMessage = {
      topic: packet.topic,
      payload: packet.payload as Buffer,
      device: client ? identityOf(client) : INTERNAL_PUBLISHER,
      dup: packet.dup === true,
      retain: packet.retain === true,
    };
    dispatch.deliver(msg);
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
      gate.countReject(identityOf(client), why === "too-large" ? "too-large" : "bad-json");
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
  const sweep = gate.startRevocationSweep(opts.revocationSweepMs ?? 5_000);
  broker.on("clientDisconnect", (c) => gate.forget(c));

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
    subscribeInternal: (pattern, fn) => dispatch.add(pattern, fn),
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
