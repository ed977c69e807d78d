import { afterAll, beforeAll, describe, expect, it } from "vitest";
import fc from "fast-check";
import mqtt, { type MqttClient } from "mqtt";
import { Ingest, LoopDirectory, type DeviceIdentity, type LoopRoute } from "@/server/ingest";
import { IngestCounters } from "@/server/ingest/counters";
import { startBroker, StaticCredentials, type BrokerService } from "@/server/broker";
import type { RejectReason } from "@/lib/domain/telemetry";
import type { SampleDto } from "@/lib/domain/types";
import { addExpected, expectRaw, hostileMessage, renderSamples, type Expected, type HostileMessage, type LoopCursor } from "./hostile";
import { ManualClock, credential, testContext } from "./helpers";
import { Bus } from "@/server/context";
import { TrackerRegistry } from "@/server/tracking/registry";
import type { LoopConfig } from "@/server/tracking/types";
import { allNumbers } from "../tracking/helpers";
import { piTuning, testLoopConfig } from "@/tests/helpers/loop-config";

const loopConfig = (id: number): LoopConfig => testLoopConfig({ id, siteId: 10, tag: `FIC-10${id - 1}`, controller: piTuning(0.5, 8) });

// Fuzzing the telemetry contract (docs/architecture.md §5) with fast-check: every hostile message is
// generated together with the outcome the contract prescribes; the server must stay up, count
// each rejection by its reason, and pass on exactly the valid samples, all finite and in order.

const LOOPS = 4;
const NOW = Date.UTC(2026, 0, 5, 8, 0, 0);
const routes: LoopRoute[] = [
  ...Array.from({ length: LOOPS }, (_, i) => ({ loopId: i + 1, tenantId: 1, siteId: 10, tenantSlug: "acme", siteSlug: "north", loopSlug: `fic-10${i}` })),
  { loopId: 99, tenantId: 2, siteId: 20, tenantSlug: "brix", siteSlug: "delta", loopSlug: "fic-100" },
];
const topicOf = (i: number) => `rg/acme/north/fic-10${i}/samples`;
const acme: DeviceIdentity = { key: "acme-gw1", tenantId: 1, tenantSlug: "acme", siteSlug: "north" };

function freshCursors(): LoopCursor[] {
  return Array.from({ length: LOOPS }, () => ({ lastT: NOW - 3_600_000, lastBody: null, lastFirstT: null, lastCount: 0 }));
}

/** Turn a generated message into (topic, body, expected outcome), advancing the cursors. */
function render(m: HostileMessage, cursors: LoopCursor[]): { topic: string; body: string | Uint8Array; expected: Expected } {
  if (m.kind === "samples") {
    const { body, expected } = renderSamples(m.items, m.asArray, cursors[m.loop]!, NOW);
    return { topic: topicOf(m.loop), body, expected };
  }
  if (m.kind === "raw") return { topic: topicOf(m.loop), body: m.body, expected: expectRaw(m.body) };
  const scratch: LoopCursor = { lastT: NOW - 3_600_000, lastBody: null, lastFirstT: null, lastCount: 0 };
  return { topic: "rg/acme/north/zz-not-a-loop/samples", body: renderSamples(m.items, true, scratch, NOW).body, expected: { accepted: [], reasons: { "unknown-loop": 1 }, redelivered: 0 } };
}

function checkSamples(taken: Map<number, SampleDto[]>): void {
  for (const [, list] of taken) {
    for (let i = 0; i < list.length; i++) {
      const s = list[i]!;
      for (const v of [s.t, s.sp, s.pv, s.mv]) expect(Number.isFinite(v)).toBe(true);
      if (i > 0) expect(s.t).toBeGreaterThan(list[i - 1]!.t);
    }
  }
}

function nonZero(r: Partial<Record<RejectReason, number>> | Record<RejectReason, number>): Partial<Record<RejectReason, number>> {
  return Object.fromEntries(Object.entries(r).filter(([, v]) => v !== 0).sort(([a], [b]) => a.localeCompare(b)));
}

describe("ingest fuzz, in-process", () => {
  it("matches the contract on 20 runs x 500 hostile messages, and no tracker state turns non-finite", () => {
    let total = 0;
    let states = 0;
    const result = fc.check(
      fc.property(fc.array(hostileMessage(LOOPS), { minLength: 500, maxLength: 500 }), (messages) => {
        const taken = new Map<number, SampleDto[]>();
        const bus = new Bus();
        const clock = new ManualClock(NOW);
        const registry = new TrackerRegistry({ bus, clock }, Array.from({ length: LOOPS }, (_, i) => loopConfig(i + 1)));
        // Recorded, not thrown: ingest shields itself from a failing sink, which would hide a throw.
        const nonFinite: number[] = [];
        bus.on("tracker:update", (st) => {
          states++;
          if (!allNumbers(st).every(Number.isFinite)) nonFinite.push(st.loopId);
        });
        const ingest = new Ingest({
          directory: new LoopDirectory(routes),
          now: () => NOW,
          sink: (route, samples, receivedAt) => {
            taken.set(route.loopId, [...(taken.get(route.loopId) ?? []), ...samples]);
            registry.push(route.loopId, samples, receivedAt);
          },
        });
        const cursors = freshCursors();
        ingest.seedLastTimes(cursors.map((c, i) => [i + 1, c.lastT] as [number, number]));
        const expected: Expected = { accepted: [], reasons: {}, redelivered: 0 };
        for (const m of messages) {
          const { topic, body, expected: e } = render(m, cursors);
          addExpected(expected, e);
          const out = ingest.handle({ topic, payload: body, device: acme });
          total++;
          const got = JSON.stringify([out.accepted, out.redelivered, nonZero(out.rejected)]);
          const want = JSON.stringify([e.accepted.length, e.redelivered, nonZero(e.reasons)]);
          if (got !== want) throw new Error(`message ${JSON.stringify(m).slice(0, 400)} body ${String(body).slice(0, 200)}: got ${got}, want ${want}`);
        }
        const totals = ingest.counters.totals(1);
        expect(JSON.stringify(nonZero(totals.rejected))).toBe(JSON.stringify(nonZero(expected.reasons)));
        expect(totals.redelivered).toBe(expected.redelivered);
        expect(totals.acceptedSamples).toBe(expected.accepted.length);
        expect(totals.messages).toBe(messages.length);
        checkSamples(taken);
        expect(nonFinite).toEqual([]);
        for (const st of registry.states()) expect(allNumbers(st).every(Number.isFinite)).toBe(true);
        expect([...taken.values()].flat().map((s) => s.t).sort((a, b) => a - b)).toEqual([...expected.accepted].sort((a, b) => a - b));
      }),
      { numRuns: 20, seed: 20261201, endOnFailure: true },
    );
    // Report the failure without printing 500 messages (re-run with the seed and path to see them).
    if (result.failed) throw new Error(`fuzz failed: seed ${result.seed}, path ${result.counterexamplePath}: ${String(result.errorInstance)}`);
    expect(total).toBe(10_000);
    expect(states).toBeGreaterThan(1000);
  });
});

describe("ingest fuzz over the real broker", () => {
  let broker: BrokerService;
  let counters: IngestCounters;
  let ingest: Ingest;
  const taken = new Map<number, SampleDto[]>();
  let url: string;
  const clients: MqttClient[] = [];

  beforeAll(async () => {
    const clock = new ManualClock(NOW);
    counters = new IngestCounters();
    ingest = new Ingest({
      directory: new LoopDirectory(routes),
      now: () => clock.now(),
      counters,
      sink: (route, samples) => {
        const list = taken.get(route.loopId) ?? [];
        for (const s of samples) list.push(s);
        taken.set(route.loopId, list);
      },
    });
    broker = await startBroker(testContext(clock), {
      credentials: new StaticCredentials([
        credential({ keyId: "acme-gw1", secret: "acme-secret", tenantId: 1, tenantSlug: "acme", siteSlug: "north", siteId: 10 }),
      ]),
      counters,
      host: "127.0.0.1",
      port: 0,
      mqttUrl: null,
      perIp: { points: 10_000, durationS: 60 },
      perKey: { points: 10_000, durationS: 60 },
    });
    broker.subscribeInternal("rg/+/+/+/samples", (m) => ingest.handle({ topic: m.topic, payload: m.payload, device: m.device, dup: m.dup, retain: m.retain }));
    url = `mqtt://127.0.0.1:${broker.address()!.port}`;
  });

  afterAll(async () => {
    await Promise.all(clients.map((c) => c.endAsync(true).catch(() => undefined)));
    await broker?.stop();
  });

  const connect = async (clientId = "acme-gw1") => {
    const c = await mqtt.connectAsync(url, { username: "acme-gw1", password: "acme-secret", clientId, reconnectPeriod: 0 });
    clients.push(c);
    return c;
  };
  const until = async (cond: () => boolean, ms = 30_000) => {
    const end = Date.now() + ms;
    while (!cond() && Date.now() < end) await new Promise((r) => setTimeout(r, 20));
  };

  it("survives 10,000 hostile messages and 300 hostile connections, counting each by reason", async () => {
    const seed = 4242;
    const messages = fc.sample(hostileMessage(LOOPS), { numRuns: 10_000, seed });
    const cursors = freshCursors();
    ingest.seedLastTimes(cursors.map((c, i) => [i + 1, c.lastT] as [number, number]));
    const expected: Expected = { accepted: [], reasons: {}, redelivered: 0 };
    const main = await connect();

    // Topic-level abuse, each on its own connection (the broker closes the offender).
    const abuse: [string, boolean, RejectReason][] = [
      ["rg/brix/delta/fic-100/samples", false, "wrong-tenant"],
      ["rg/acme/south/fic-100/samples", false, "wrong-tenant"],
      [topicOf(0), true, "retained"],
      ["$SYS/broker/fake", false, "bad-topic"],
      ["rg/acme/north/FIC-100/samples", false, "bad-topic"],
      ["rg/acme/north/fic-100/config/x", false, "bad-topic"],
    ];
    const abuseExpected: Partial<Record<RejectReason, number>> = {};
    let sent = 0;
    for (let i = 0; i < messages.length; i++) {
      const { topic, body, expected: e } = render(messages[i]!, cursors);
      addExpected(expected, e);
      main.publish(topic, typeof body === "string" ? body : Buffer.from(body), { qos: 0 });
      sent++;
      if (i % 33 === 0 && i / 33 < 300) {
        const [t, retain, reason] = abuse[(i / 33) % abuse.length]!;
        abuseExpected[reason] = (abuseExpected[reason] ?? 0) + 1;
        const bad = await connect(`acme-gw1:abuser-${i}`);
        await new Promise<void>((resolve) => {
          bad.once("close", () => resolve());
          bad.publish(t, `{"t":${NOW},"sp":1,"pv":1,"mv":1,"mode":"auto"}`, { qos: 0, retain });
        });
      }
      if (i % 500 === 0) await new Promise((r) => setImmediate(r));
    }
    await until(() => counters.totals(1).messages >= sent);

    // Valid telemetry still flows afterwards, on a fresh message.
    const last = cursors[0]!.lastT + 1;
    await main.publishAsync(topicOf(0), JSON.stringify({ t: last, sp: 5, pv: 5, mv: 5, mode: "auto" }), { qos: 1 });
    expected.accepted.push(last);
    await until(() => counters.totals(1).acceptedSamples >= expected.accepted.length);

    const totals = counters.totals(1);
    const want = { ...expected.reasons };
    for (const [k, v] of Object.entries(abuseExpected) as [RejectReason, number][]) want[k] = (want[k] ?? 0) + v;
    expect(totals.messages).toBe(sent + 1);
    expect(nonZero(totals.rejected)).toEqual(nonZero(want));
    expect(totals.redelivered).toBe(expected.redelivered);
    expect(totals.acceptedSamples).toBe(expected.accepted.length);
    checkSamples(taken);
    expect(taken.get(99)).toBeUndefined();
    expect(main.connected).toBe(true);
    expect((await broker.health()).status).toBe("ok");
    console.info(`[fuzz] seed ${seed}: ${sent} messages, ${expected.accepted.length} samples accepted, rejected ${JSON.stringify(nonZero(totals.rejected))}`);
  }, 240_000);
});
