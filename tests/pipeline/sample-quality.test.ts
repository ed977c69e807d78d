/**
 * Telemetry contract (the optional `quality` field) and bad-quality samples at ingest and in
 * history: a fault value (-9999, a common "no reading" code; 3.4e38, float32 overflow, IEEE 754
 * single max 3.4028235e38) or a PV beyond the loop's range plus 10 % of span (common practice)
 * is accepted as bad quality, counted per device and reason, and kept out of the per-second
 * min/mean/max, which counts it in `bad` instead.
 */
import { describe, expect, it } from "vitest";
import { judgeSampleQuality, RANGE_MARGIN_FRACTION } from "@/lib/domain/sample-quality";
import { validateSample } from "@/lib/domain/telemetry";
import type { SampleDto } from "@/lib/domain/types";
import { HistoryAggregator } from "@/server/history/aggregate";
import type { MinuteBucketRow, SecondBucketRow } from "@/server/history/aggregate";
import { Ingest, LoopDirectory, type DeviceIdentity, type LoopRoute } from "@/server/ingest";

const NOW = Date.UTC(2026, 0, 5, 8, 0, 0);
const range = { pvLo: 0, pvHi: 200, mvLo: 0, mvHi: 100 };
const route: LoopRoute = { loopId: 1, tenantId: 1, siteId: 10, tenantSlug: "acme", siteSlug: "north", loopSlug: "fic-101", range };
const gw: DeviceIdentity = { key: "acme-gw1", tenantId: 1, tenantSlug: "acme", siteSlug: "north" };
const topic = "rg/acme/north/fic-101/samples";
const s = (t: number, extra: Partial<SampleDto> = {}) => ({ t, sp: 100, pv: 99, mv: 40, mode: "auto" as const, ...extra });

describe("telemetry contract: quality", () => {
  it("takes an optional quality of good, bad or uncertain; anything else is bad-shape", () => {
    expect(validateSample(s(1, { quality: "bad" }))).toEqual({ ok: true, sample: s(1, { quality: "bad" }) });
    expect(validateSample(s(1, { quality: "good" }))).toEqual({ ok: true, sample: s(1) });
    expect(validateSample({ ...s(1), quality: "questionable" })).toEqual({ ok: false, reason: "bad-shape" });
    expect(validateSample({ ...s(1), quality: 0 })).toEqual({ ok: false, reason: "bad-shape" });
  });

  it("judges fault values, the range with its margin, and the gateway's word", () => {
    expect(judgeSampleQuality(s(1, { pv: -9999 }), range)).toEqual({ quality: "bad", reason: "fault-value" });
    expect(judgeSampleQuality(s(1, { pv: 3.4e38 }), range)).toEqual({ quality: "bad", reason: "fault-value" });
    expect(judgeSampleQuality(s(1, { sp: -3.4028234663852886e38 }), null)).toEqual({ quality: "bad", reason: "fault-value" });
    // 10 % of a 200 span is 20: 220 is still in, 220.1 is out
    expect(RANGE_MARGIN_FRACTION).toBe(0.1);
    expect(judgeSampleQuality(s(1, { pv: 220 }), range).quality).toBe("good");
    expect(judgeSampleQuality(s(1, { pv: 220.1 }), range)).toEqual({ quality: "bad", reason: "out-of-range" });
    expect(judgeSampleQuality(s(1, { pv: -20.1 }), range)).toEqual({ quality: "bad", reason: "out-of-range" });
    // -9999 inside a configured range is data
    expect(judgeSampleQuality(s(1, { pv: -9999, sp: -9990 }), { ...range, pvLo: -10_000, pvHi: 0 }).quality).toBe("good");
    // MV beyond its range: an output the actuator cannot follow, not a sensor fault
    expect(judgeSampleQuality(s(1, { mv: 125 }), range)).toEqual({ quality: "uncertain", reason: "mv-out-of-range" });
    expect(judgeSampleQuality(s(1, { quality: "bad" }), range)).toEqual({ quality: "bad", reason: "reported-bad" });
    expect(judgeSampleQuality(s(1, { quality: "uncertain" }), range)).toEqual({ quality: "uncertain", reason: "reported-uncertain" });
  });
});

describe("ingest accepts bad samples as bad quality and counts them", () => {
  it("passes -9999 and 3.4e38 on with quality bad, counted per device and reason", () => {
    const taken: SampleDto[] = [];
    const ingest = new Ingest({ directory: new LoopDirectory([route]), now: () => NOW, sink: (_r, samples) => taken.push(...samples) });
    const body = JSON.stringify([s(NOW - 4000), s(NOW - 3000, { pv: -9999 }), s(NOW - 2000, { pv: 3.4e38 }), s(NOW - 1000, { pv: 500 }), s(NOW - 500, { mv: 150 })]);
    const out = ingest.handle({ topic, payload: body, device: gw });
    expect(out.accepted).toBe(5);
    expect(out.rejected).toEqual({});
    expect(out.quality).toEqual({ "fault-value": 2, "out-of-range": 1, "mv-out-of-range": 1 });
    expect(taken.map((x) => x.quality ?? "good")).toEqual(["good", "bad", "bad", "bad", "uncertain"]);
    expect(taken[1]!.qualityReason).toBe("fault-value");
    const c = ingest.counters.snapshot(1)[0]!;
    expect(c.acceptedSamples).toBe(5);
    expect(c.quality["fault-value"]).toBe(2);
    expect(c.lastBadReason).toBe("mv-out-of-range");
    expect(ingest.counters.totals(1).quality["out-of-range"]).toBe(1);
  });
});

describe("history keeps bad samples out of the statistics", () => {
  it("a second with one -9999 among good samples: min/mean/max of the good ones, bad counted", () => {
    const seconds: SecondBucketRow[] = [];
    const minutes: MinuteBucketRow[] = [];
    const agg = new HistoryAggregator({ second: (r) => seconds.push(r), minute: (r) => minutes.push(r), snapshot: () => undefined });
    const t0 = Math.floor(NOW / 60_000) * 60_000;
    agg.addSamples(1, [s(t0, { pv: 98 }), s(t0 + 200, { pv: -9999, quality: "bad" }), s(t0 + 400, { pv: 102 }), s(t0 + 1200, { pv: 3.4e38, quality: "bad" })]);
    agg.closeAll();
    expect(seconds[0]).toMatchObject({ t: t0, pv: [98, 100, 102], n: 2, bad: 1, uncertain: 0 });
    // a second of bad samples only still leaves its count
    expect(seconds[1]).toMatchObject({ t: t0 + 1000, pv: [null, null, null], n: 0, bad: 1 });
    expect(minutes[0]).toMatchObject({ pv: [98, 100, 102], n: 2, bad: 2 });
  });
});
