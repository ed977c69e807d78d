import { describe, expect, it } from "vitest";
import { Ingest, LoopDirectory, type DeviceIdentity, type LoopRoute } from "@/server/ingest";
import type { SampleDto } from "@/lib/domain/types";

// Rules from docs/architecture.md §5 (telemetry contract); the DUP flag from MQTT 3.1.1 §3.3.1.1.

const NOW = Date.UTC(2026, 0, 5, 8, 0, 0);
const routes: LoopRoute[] = [
  { loopId: 1, tenantId: 1, siteId: 10, tenantSlug: "acme", siteSlug: "north", loopSlug: "fic-101" },
  { loopId: 2, tenantId: 2, siteId: 20, tenantSlug: "brix", siteSlug: "delta", loopSlug: "fic-101" },
];
const acme: DeviceIdentity = { key: "acme-gw1", tenantId: 1, tenantSlug: "acme", siteSlug: "north" };
const s = (t: number, extra: Partial<SampleDto> = {}) => ({ t, sp: 50, pv: 49, mv: 30, mode: "auto", ...extra });
const topic = "rg/acme/north/fic-101/samples";

function setup() {
  const taken: { loopId: number; samples: SampleDto[]; receivedAt: number }[] = [];
  let now = NOW;
  const ingest = new Ingest({
    directory: new LoopDirectory(routes),
    now: () => now,
    sink: (route, samples, receivedAt) => taken.push({ loopId: route.loopId, samples, receivedAt }),
  });
  return { ingest, taken, setNow: (t: number) => (now = t) };
}

describe("ingest judges each sample alone", () => {
  it("passes valid samples to the sink with the receive time", () => {
    const { ingest, taken } = setup();
    const out = ingest.handle({ topic, payload: JSON.stringify([s(NOW - 2000), s(NOW - 1000)]), device: acme });
    expect(out).toEqual({ accepted: 2, redelivered: 0, rejected: {} });
    expect(taken).toEqual([{ loopId: 1, samples: [s(NOW - 2000), s(NOW - 1000)], receivedAt: NOW }]);
  });

  it("drops only the bad samples of a mixed batch and counts each by reason", () => {
    const { ingest, taken } = setup();
    const body = `[${JSON.stringify(s(NOW - 5000))},{"t":${NOW - 4000},"sp":1e999,"pv":1,"mv":1,"mode":"auto"},${JSON.stringify(
      s(NOW - 5000),
    )},${JSON.stringify(s(NOW - 6000))},${JSON.stringify(s(NOW + 60_000))},{"t":"x"},${JSON.stringify(s(NOW - 3000))}]`;
    const out = ingest.handle({ topic, payload: body, device: acme });
    expect(out.accepted).toBe(2);
    expect(out.rejected).toEqual({ "non-finite": 1, duplicate: 1, "out-of-order": 1, future: 1, "bad-shape": 1 });
    expect(taken[0]!.samples.map((x) => x.t)).toEqual([NOW - 5000, NOW - 3000]);
    const c = ingest.counters.snapshot(1)[0]!;
    expect(c.acceptedSamples).toBe(2);
    expect(c.rejected.duplicate).toBe(1);
  });

  it("allows 5 s of device clock skew and no more", () => {
    const { ingest } = setup();
    expect(ingest.handle({ topic, payload: JSON.stringify(s(NOW + 5000)), device: acme }).accepted).toBe(1);
    expect(ingest.handle({ topic, payload: JSON.stringify(s(NOW + 5001)), device: acme }).rejected).toEqual({ future: 1 });
  });

  it("counts a QoS 1 re-send (DUP flag, or the same message again) as redelivery, not abuse", () => {
    const { ingest, taken } = setup();
    const body = JSON.stringify([s(NOW - 2000), s(NOW - 1000)]);
    ingest.handle({ topic, payload: body, device: acme });
    expect(ingest.handle({ topic, payload: body, device: acme, dup: true })).toEqual({ accepted: 0, redelivered: 2, rejected: {} });
    expect(ingest.handle({ topic, payload: body, device: acme })).toEqual({ accepted: 0, redelivered: 2, rejected: {} });
    // A different message that repeats a time is a duplicate.
    expect(ingest.handle({ topic, payload: JSON.stringify(s(NOW - 1000, { pv: 3 })), device: acme }).rejected).toEqual({ duplicate: 1 });
    expect(taken).toHaveLength(1);
    const c = ingest.counters.snapshot(1)[0]!;
    expect(c.redelivered).toBe(4);
    expect(c.rejected.duplicate).toBe(1);
  });

  it("refuses another tenant's topic, unknown loops, retained and malformed topics at message level", () => {
    const { ingest, taken } = setup();
    const body = JSON.stringify(s(NOW));
    expect(ingest.handle({ topic: "rg/brix/delta/fic-101/samples", payload: body, device: acme }).rejected).toEqual({ "wrong-tenant": 1 });
    expect(ingest.handle({ topic: "rg/acme/south/fic-101/samples", payload: body, device: acme }).rejected).toEqual({ "wrong-tenant": 1 });
    expect(ingest.handle({ topic: "rg/acme/north/tic-9/samples", payload: body, device: acme }).rejected).toEqual({ "unknown-loop": 1 });
    expect(ingest.handle({ topic, payload: body, device: acme, retain: true }).rejected).toEqual({ retained: 1 });
    expect(ingest.handle({ topic: "rg/acme/north/FIC-101/samples", payload: body, device: acme }).rejected).toEqual({ "bad-topic": 1 });
    expect(taken).toEqual([]);
  });

  it("checks the 64 KiB limit before parsing", () => {
    const { ingest } = setup();
    expect(ingest.handle({ topic, payload: Buffer.alloc(64 * 1024 + 1, 0x7b), device: acme }).rejected).toEqual({ "too-large": 1 });
    expect(ingest.handle({ topic, payload: Buffer.alloc(64 * 1024, 0x7b), device: acme }).rejected).toEqual({ "bad-json": 1 });
  });

  it("after a restart, seeded last times make replayed samples duplicates", () => {
    const { ingest, taken } = setup();
    ingest.seedLastTimes([[1, NOW - 1000]]);
    const out = ingest.handle({ topic, payload: JSON.stringify([s(NOW - 2000), s(NOW - 1000), s(NOW)]), device: acme });
    expect(out).toEqual({ accepted: 1, redelivered: 0, rejected: { "out-of-order": 1, duplicate: 1 } });
    expect(taken[0]!.samples.map((x) => x.t)).toEqual([NOW]);
  });

  it("never throws when the sink does, and keeps counting", () => {
    const ingest = new Ingest({
      directory: new LoopDirectory(routes),
      now: () => NOW,
      sink: () => {
        throw new Error("downstream failure");
      },
    });
    const err = console.error;
    console.error = () => undefined;
    try {
      expect(ingest.handle({ topic, payload: JSON.stringify(s(NOW)), device: acme }).accepted).toBe(1);
    } finally {
      console.error = err;
    }
  });

  it("shows an admin only their own tenant's devices", () => {
    const { ingest } = setup();
    const brix: DeviceIdentity = { key: "brix-gw1", tenantId: 2, tenantSlug: "brix", siteSlug: null };
    ingest.handle({ topic, payload: "x", device: acme });
    ingest.handle({ topic: "rg/brix/delta/fic-101/samples", payload: "x", device: brix });
    expect(ingest.counters.snapshot(1).map((d) => d.device)).toEqual(["acme-gw1"]);
    expect(ingest.counters.snapshot(2).map((d) => d.device)).toEqual(["brix-gw1"]);
  });
});
