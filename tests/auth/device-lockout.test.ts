/**
 * Device lockout by key id (issue 9, item 7): a stranger who knows a gateway's key id but not its
 * secret must not lock the gateway out. CONNECT failures are counted per source address and key
 * id together, after the secret was checked; the real device from its own address still connects.
 * The guessing address itself is stopped (CONNACK 3, "server unavailable", MQTT 3.1.1 §3.2.2.3),
 * even if it then sends the right secret. Real aedes on port 0; 127.0.0.x are all loopback on Linux.
 */
import net from "node:net";
import { MqttClient } from "mqtt";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { startBroker, StaticCredentials, type BrokerService } from "@/server/broker";
import { credential, ManualClock, testContext } from "../pipeline/helpers";

const KEY = "quillon-gw7";
const SECRET = "rgs_real-secret-of-the-gateway";

let broker: BrokerService;
let port: number;

beforeAll(async () => {
  const creds = new StaticCredentials([credential({ keyId: KEY, secret: SECRET, tenantId: 2, tenantSlug: "quillon", siteSlug: "north", siteId: 20 })]);
  // The default budgets (perKey 20 failures per 60 s); the per-address CONNECT rate is raised so
  // only the failure budget is under test.
  broker = await startBroker(testContext(new ManualClock(Date.now())), { credentials: creds, host: "127.0.0.1", port: 0, mqttUrl: null, perIp: { points: 1000, durationS: 10 } });
  port = broker.address()!.port;
});
afterAll(async () => {
  await broker?.stop();
});

/** One CONNECT from a chosen local address; the CONNACK code, or "ok". */
function connectFrom(localAddress: string, password: string, clientId = KEY): Promise<number | "ok" | "closed"> {
  return new Promise((resolve) => {
    const client = new MqttClient(() => net.createConnection({ port, host: "127.0.0.1", localAddress }), {
      username: KEY,
      password,
      clientId,
      reconnectPeriod: 0,
      connectTimeout: 5_000,
      protocolVersion: 4,
    });
    const finish = (r: number | "ok" | "closed") => {
      client.end(true);
      resolve(r);
    };
    client.once("connect", () => finish("ok"));
    client.once("error", (err) => finish((err as { code?: number }).code ?? "closed"));
    client.once("close", () => finish("closed"));
  });
}

describe("CONNECT failures are throttled per source address and key id", () => {
  it("21 wrong-secret CONNECTs from one address do not lock out the real device elsewhere", async () => {
    const stranger: (number | "ok" | "closed")[] = [];
    for (let i = 0; i < 21; i++) stranger.push(await connectFrom("127.0.0.2", `guess-${i}`));
    // 20 refusals for the bad secret (4), then the stranger's address is stopped for this key (3).
    expect(stranger.slice(0, 20).every((c) => c === 4)).toBe(true);
    expect(stranger[20]).toBe(3);

    // The gateway, from its own address, with its secret: connects.
    expect(await connectFrom("127.0.0.3", SECRET)).toBe("ok");
    // The guessing address stays stopped for this key even with the right secret (no more guesses).
    expect(await connectFrom("127.0.0.2", SECRET)).toBe(3);
  });
});
