import { describe, expect, it } from "vitest";
import { poleCharacteristics, polyRoots } from "@/lib/control";
import type { LoopStateBrief, LoopStateDto, PoleDto } from "@/lib/domain/types";
import { startRealtimeEmitter } from "@/server/realtime/emitter";
import { roundSig, roundTo, toLoopBrief } from "@/server/realtime/summary";
import { ManualClock, testContext } from "../pipeline/helpers";

// The live summary of a loop (`loop:state`, docs/architecture.md §8) against the full state it is
// built from. The expectations are identities of the summary's own definition (same figures,
// rounded; no uncertainty, zeros, polynomial, forecast or last sample), not stored values.

const T0 = Date.UTC(2026, 0, 5, 8, 0, 0);

/**
 * A full state of a second-order loop whose characteristic polynomial is
 * z^3 - 1.62 z^2 + 0.8 z - 0.1 (made up for the test): poles from lib/control, the dominant pair
 * described by poleCharacteristics, a covariance per pole, and every detail-only field filled.
 */
function fullState(loopId = 11, tenantId = 3, at = T0): LoopStateDto {
  const characteristic = [1, -1.62, 0.8, -0.1];
  const T = 2;
  const modelPoles: PoleDto[] = polyRoots(characteristic).map((z, i) => ({ ...z, radius: Math.hypot(z.re, z.im), sdRadius: 0.0031 + i * 1e-4, cov: [1.234567e-5, -2.5e-7, 9.87654e-6] }));
  const dominant = modelPoles.reduce((a, b) => (b.radius > a.radius ? b : a));
  const ch = poleCharacteristics(dominant, T);
  return {
    loopId,
    tenantId,
    at: at + 0.4,
    receivedAt: at - 120.3,
    trackerState: "tracking",
    stateReason: null,
    estimationPeriodS: T,
    samples: 4321,
    excitation: 0.123456,
    fitPercent: 91.23456,
    spectralRadius: dominant.radius,
    rimDistance: 1 - dominant.radius,
    decayRatio: ch.decayRatio,
    juryStable: true,
    dominant: { zeta: ch.zeta, wn: ch.wn, timeConstant: ch.timeConstant },
    gainHeadroom: 2.718281828,
    radiusSd: 0.00412345,
    forecast: { radiusOne: { at: at + 3_600_000, low: at + 3_000_000, high: at + 4_000_000 }, alarmLevel: { at: at + 1_800_000, low: at + 1_500_000, high: at + 2_000_000, decayRatio: 0.35 } },
    modelPoles,
    dataPoles: modelPoles.slice(0, 2).map((p) => ({ ...p, re: p.re * 0.99, im: p.im * 1.01, radius: Math.hypot(p.re * 0.99, p.im * 1.01) })),
    dataPolesKind: "disturbance-response",
    zeros: [{ re: -0.4, im: 0 }],
    characteristic,
    delaySamples: 2,
    last: { t: at - 120, sp: 55, pv: 54.2, mv: 41.7, mode: "auto" },
  };
}

const BRIEF_KEYS: (keyof LoopStateBrief)[] = [
  "loopId",
  "tenantId",
  "at",
  "receivedAt",
  "trackerState",
  "stateReason",
  "estimationPeriodS",
  "spectralRadius",
  "rimDistance",
  "decayRatio",
  "juryStable",
  "dominant",
  "gainHeadroom",
  "modelPoles",
  "dataPoles",
  "dataPolesKind",
  // which poles the figures come from, and the slowest-decaying oscillating mode (its angle sets the gauge levels)
  "polesFrom",
  "oscillation",
  // the routine-data verdict (label, confidence, time still needed) the tiles, list and order read
  "routine",
];

describe("loop summary (server/realtime/summary.ts)", () => {
  it("keeps the figures the console shows, rounded, and drops what only the loop detail shows", () => {
    const s = fullState();
    const b = toLoopBrief(s);
    expect(Object.keys(b).sort()).toEqual([...BRIEF_KEYS].sort());
    expect([b.loopId, b.tenantId, b.trackerState, b.stateReason, b.estimationPeriodS, b.juryStable, b.dataPolesKind]).toEqual([11, 3, "tracking", null, 2, true, "disturbance-response"]);
    expect(b.at).toBe(Math.round(s.at));
    expect(b.receivedAt).toBe(Math.round(s.receivedAt!));
    // 1e-4 rounding: within half a unit of the fourth decimal
    for (const k of ["spectralRadius", "rimDistance", "decayRatio"] as const) expect(Math.abs(b[k]! - s[k]!)).toBeLessThanOrEqual(5e-5 + 1e-15);
    expect(Math.abs(b.dominant!.zeta! - s.dominant!.zeta!)).toBeLessThanOrEqual(5e-4 + 1e-15);
    expect(Math.abs(b.dominant!.wn! - s.dominant!.wn!) / s.dominant!.wn!).toBeLessThanOrEqual(5e-4);
    expect(b.gainHeadroom).toBe(2.718);
    expect(b.modelPoles).toHaveLength(3);
    expect(b.dataPoles).toHaveLength(2);
    b.modelPoles.forEach((p, i) => {
      const f = s.modelPoles[i]!;
      expect(Object.keys(p).sort()).toEqual(["im", "radius", "re"]);
      expect(Math.abs(p.re - f.re)).toBeLessThanOrEqual(5e-5 + 1e-15);
      expect(Math.abs(p.im - f.im)).toBeLessThanOrEqual(5e-5 + 1e-15);
      expect(Math.abs(p.radius - f.radius)).toBeLessThanOrEqual(5e-5 + 1e-15);
      // the rounded place and the rounded radius still agree to the rounding
      expect(Math.abs(Math.hypot(p.re, p.im) - p.radius)).toBeLessThanOrEqual(2e-4);
    });
    // nothing of the detail-only fields travels
    const json = JSON.stringify(b);
    for (const k of ["cov", "sdRadius", "zeros", "characteristic", "forecast", "last", "fitPercent", "excitation", "radiusSd", "samples", "delaySamples"]) expect(json).not.toContain(`"${k}"`);
    // a full state still fits wherever a summary is expected (the REST list seeds the store)
    const asBrief: LoopStateBrief = s;
    expect(asBrief.spectralRadius).toBe(s.spectralRadius);
  });

  it("carries the routine-data verdict without its evidence, figures or period group", () => {
    const s: LoopStateDto = {
      ...fullState(),
      routine: {
        at: 1_700_000_000_123.4, label: "valve-stiction", confidence: 0.83456, needsS: null, reason: null,
        evidence: ["likely valve stiction: the cycles have the shape of a stick-slip cycle"], windowS: 600,
        oscillationPeriodS: 41.2, harrisIndex: null, stiction: "likely",
        sharedOscillation: { periodS: 41.2, loops: [{ loopId: 2, tag: "FIC-2", periodS: 40.5 }] },
      },
    };
    const b = toLoopBrief(s);
    expect(b.routine).toEqual({ at: 1_700_000_000_123, label: "valve-stiction", confidence: 0.83, needsS: null });
    expect(JSON.stringify(b)).not.toContain("evidence");
    expect(toLoopBrief({ ...s, routine: { ...s.routine!, label: "undetermined", needsS: 1234.5 } }).routine?.needsS).toBe(1230);
    expect(toLoopBrief(fullState()).routine).toBeNull();
  });

  it("is a fraction of the full state's JSON", () => {
    const s = fullState();
    const full = JSON.stringify(s).length;
    const brief = JSON.stringify(toLoopBrief(s)).length;
    // measured on this state: the summary is well under half (the bench prints the batch sizes)
    expect(brief).toBeLessThan(full / 2);
  });

  it("turns anything not finite into null and leaves out a pole that has no place", () => {
    const s = fullState();
    const bad: LoopStateDto = {
      ...s,
      spectralRadius: Number.NaN,
      rimDistance: Number.NaN,
      decayRatio: null,
      gainHeadroom: Number.POSITIVE_INFINITY,
      dominant: { zeta: Number.NaN, wn: null, timeConstant: Number.POSITIVE_INFINITY },
      modelPoles: [{ re: Number.NaN, im: 0, radius: Number.NaN, sdRadius: null, cov: null }, ...s.modelPoles.slice(1)],
      receivedAt: null,
    };
    const b = toLoopBrief(bad);
    expect([b.spectralRadius, b.rimDistance, b.decayRatio, b.gainHeadroom, b.receivedAt]).toEqual([null, null, null, null, null]);
    expect(b.dominant).toEqual({ zeta: null, wn: null, timeConstant: null });
    expect(b.modelPoles).toHaveLength(2);
    expect(toLoopBrief({ ...s, dominant: null }).dominant).toBeNull();
  });

  it("rounds to decimals and to significant digits, without a negative zero", () => {
    expect(roundTo(0.123449, 4)).toBe(0.1234);
    expect(roundTo(0.12345000001, 4)).toBe(0.1235);
    expect(Object.is(roundTo(-0.00001, 4), 0)).toBe(true);
    expect(roundTo(undefined, 4)).toBeNull();
    expect(roundSig(123456, 4)).toBe(123500);
    expect(roundSig(0.000123456, 4)).toBe(0.0001235);
    expect(roundSig(0, 4)).toBe(0);
    expect(roundSig(Number.NaN, 4)).toBeNull();
  });
});

describe("realtime emitter: summaries to the tenant, full states to watchers", () => {
  function rig(rooms: Map<string, Set<string>>) {
    const clock = new ManualClock(T0);
    const ctx = testContext(clock);
    const emitted: { room: string; event: string; payload: unknown }[] = [];
    ctx.io = {
      to: (room: string) => ({ emit: (event: string, payload: unknown) => emitted.push({ room, event, payload }) }),
      sockets: { adapter: { rooms } },
    } as unknown as typeof ctx.io;
    return { clock, em: startRealtimeEmitter(ctx), emitted };
  }

  it("sends each tenant one batch of summaries and each watched loop its latest full state", () => {
    const { clock, em, emitted } = rig(
      new Map([
        ["tenant:3", new Set(["s1", "s2"])],
        ["loop:11", new Set(["s1"])],
      ]),
    );
    for (let k = 0; k < 5; k++) {
      em.state(fullState(11, 3, T0 + k * 100));
      em.state(fullState(12, 3, T0 + k * 100));
      clock.advance(100);
    }
    const batches = emitted.filter((e) => e.event === "loop:state");
    expect(batches.map((e) => e.room)).toEqual(["tenant:3"]);
    const batch = batches[0]!.payload as LoopStateBrief[];
    expect(batch.map((b) => b.loopId)).toEqual([11, 12]);
    // the latest state of each loop, summarised
    const latest11 = fullState(11, 3, T0 + 400);
    expect(batch[0]).toEqual(toLoopBrief(latest11));
    const details = emitted.filter((e) => e.event === "loop:detail");
    expect(details.map((e) => e.room)).toEqual(["loop:11"]);
    expect(details[0]!.payload).toEqual(latest11);
    expect(em.stats()).toMatchObject({ stateBatches: 1, statesSent: 2, detailsSent: 1 });
    em.stop();
  });

  it("builds no batch for a tenant room nobody is in, and still serves a watcher", () => {
    const { clock, em, emitted } = rig(new Map([["loop:11", new Set(["s1"])]]));
    em.state(fullState(11, 3));
    em.state(fullState(12, 3));
    clock.advance(500);
    expect(emitted.map((e) => [e.event, e.room])).toEqual([["loop:detail", "loop:11"]]);
    em.stop();
  });
});
