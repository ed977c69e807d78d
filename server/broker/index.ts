/**
 * The MQTT boundary (docs/architecture.md §1, §5, §9). By default an embedded aedes broker on
 * MQTT_HOST:MQTT_PORT (loopback; embedded.ts, gatekeeping in auth-hooks.ts); with MQTT_URL set, a
 * client of that external broker instead (external.ts). Either way the rest of the server sees the
 * same thing: `subscribeInternal(pattern, handler)` on the one dispatch (dispatch.ts) delivers each
 * message in-process with the identity of the device that sent it. Browsers never talk MQTT;
 * devices may publish telemetry (JSON, or Sparkplug B) and nothing else.
 */
import type { ServerContext } from "@/server/context";
import { startEmbedded } from "./embedded";
import { externalOptionsFromConfig, startExternal } from "./external";
import type { BrokerOptions, BrokerService } from "./types";

export { hashDeviceSecret, StaticCredentials, CachedCredentials, clientIdAllowed, type DeviceCredential, type CredentialLookup } from "./credentials";
export { externalOptionsFromConfig, startExternal, type ExternalBrokerOptions } from "./external";
export { EXTERNAL_BROKER, INTERNAL_PUBLISHER, type BrokerMessage, type BrokerMessageHandler, type BrokerOptions, type BrokerService, type TopicNamespace } from "./types";

export async function startBroker(ctx: ServerContext, opts: BrokerOptions): Promise<BrokerService> {
  const url = opts.mqttUrl === undefined ? ctx.config.MQTT_URL : opts.mqttUrl;
  if (url) return startExternal(externalOptionsFromConfig(ctx.config, url));
  return startEmbedded(ctx, opts);
}
