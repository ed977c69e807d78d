/**
 * A client of an external broker (MQTT_URL) in place of the embedded one. The external broker
 * authenticates devices itself and does not say which credential published, so messages carry
 * EXTERNAL_BROKER as their device; the pipeline attributes them by topic (tenant slug, or a
 * Sparkplug group id bound to a tenant).
 */
import mqtt from "mqtt";
import { Dispatch } from "./dispatch";
import { EXTERNAL_BROKER, type BrokerService } from "./types";

export function startExternal(url: string): BrokerService {
  const client = mqtt.connect(url, {
    clientId: `rimguard-ingest-${process.pid}`,
    clean: true,
    reconnectPeriod: 2_000,
    connectTimeout: 10_000,
  });
  const dispatch = new Dispatch((pattern, active) => {
    if (active) client.subscribe(pattern, { qos: 1 });
    else client.unsubscribe(pattern);
  });
  let lastError: string | null = null;
  client.on("error", (err) => {
    lastError = err.message;
  });
  client.on("message", (topic, payload, packet) => {
    dispatch.deliver({ topic, payload, device: EXTERNAL_BROKER, dup: packet.dup === true, retain: packet.retain === true });
  });
  return {
    name: "broker",
    broker: null,
    address: () => null,
    async publishInternal(topic, payload) {
      await client.publishAsync(topic, payload, { qos: 0, retain: false });
    },
    subscribeInternal: (pattern, fn) => dispatch.add(pattern, fn),
    health() {
      return {
        status: client.connected ? "ok" : "critical",
        detail: { mode: "external", url: redactUrl(url), connected: client.connected, lastError },
      };
    },
    async stop() {
      await client.endAsync(true);
    },
  };
}

function redactUrl(url: string): string {
  try {
    const u = new URL(url);
    if (u.password) u.password = "***";
    return u.toString();
  } catch {
    return "(invalid url)";
  }
}
