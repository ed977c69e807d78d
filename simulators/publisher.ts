/**
 * MQTT side of the simulators: one client per tenant, authenticated with that tenant's device
 * credential, publishing telemetry only (never subscribing, never retaining).
 */
import mqtt, { type MqttClient } from "mqtt";

export interface DeviceCredential {
  /** MQTT username (the credential's key id). */
  username: string;
  password: string;
  /** MQTT client id (bound to the credential by the broker). */
  clientId: string;
}

export interface TelemetryPublisher {
  publish(topic: string, payload: string): Promise<void>;
  close(): Promise<void>;
  /** Messages whose publish failed (broker refused or connection lost). */
  readonly errors: number;
}

/** Credential keys a topic rg/<tenant>/<site>/<loop>/samples may use: "tenant/site", then "tenant". */
function keysOf(topic: string): [string, string] {
  const parts = topic.split("/");
  return [`${parts[1] ?? ""}/${parts[2] ?? ""}`, parts[1] ?? ""];
}

/**
 * Connect one client per credential (keyed "tenantSlug/siteSlug" for a site credential or
 * "tenantSlug" for a tenant-wide one) and route each publish by the topic's tenant and site.
 * QoS 0 by default (telemetry is superseded by the next sample); QoS 1 on request.
 */
export async function connectPublisher(
  url: string,
  credentials: Record<string, DeviceCredential>,
  options: { qos?: 0 | 1; connectTimeoutMs?: number; /** PEM certificate(s) to trust for mqtts. */ ca?: Buffer } = {},
): Promise<TelemetryPublisher> {
  const clients = new Map<string, MqttClient>();
  let errors = 0;
  try {
    for (const [key, cred] of Object.entries(credentials)) {
      const client = await mqtt.connectAsync(url, {
        username: cred.username,
        password: cred.password,
        clientId: cred.clientId,
        protocolVersion: 4,
        reconnectPeriod: 2_000,
        connectTimeout: options.connectTimeoutMs ?? 10_000,
        clean: true,
        ...(options.ca ? { ca: options.ca } : {}),
        rejectUnauthorized: true,
      });
      client.on("error", () => {
        errors++;
      });
      clients.set(key, client);
    }
  } catch (e) {
    await Promise.all([...clients.values()].map((c) => c.endAsync(true).catch(() => undefined)));
    throw new Error(`simulator could not connect to the MQTT broker at ${url}: ${(e as Error).message}`);
  }
  const qos = options.qos ?? 0;
  return {
    get errors() {
      return errors;
    },
    async publish(topic, payload) {
      const [siteKey, tenantKey] = keysOf(topic);
      const client = clients.get(siteKey) ?? clients.get(tenantKey);
      if (!client) {
        errors++;
        throw new Error(`no device credential for the site or tenant of ${topic}`);
      }
      if (qos === 0) {
        client.publish(topic, payload, { qos: 0, retain: false });
        return;
      }
      try {
        await client.publishAsync(topic, payload, { qos, retain: false });
      } catch (e) {
        errors++;
        throw e;
      }
    },
    async close() {
      await Promise.all([...clients.values()].map((c) => c.endAsync().catch(() => undefined)));
    },
  };
}
