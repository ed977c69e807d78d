import { describe, expect, it } from "vitest";
import { LoopStore, SPARK_POINTS, sparkValues } from "@/lib/client/loop-store";
import type { LoopStateBrief, LoopStateDto, LoopSummary } from "@/lib/domain/types";
import { toLoopBrief } from "@/server/realtime/summary";

// The browser's loop store merging the API's full states with live summaries (`loop:state`) and
// full states (`loop:detail`): newest state wins by its `at`, one render per animation frame,
// unknown loops ignored. Expectations follow from the store's own rules (no stored values).

const T0 = Date.UTC(2026, 0, 5, 8, 0, 0);

function full(loopId: number, at: number, radius: number): LoopStateDto {
  const th = 0.4;
  const pole = (r: number, a: number) => ({ re: r * Math.cos(a), im: r * Math.sin(a), radius: r, sdRadius: 0.003, cov: [1e-5, 0, 1e-5] as [number, number, number] });
  return {
    loopId,
    tenantId: 1,
    at,
    receivedAt: at,
    trackerState: "tracking",
    stateReason: null,
    estimationPeriodS: 1,
    samples: 100,
    excitation: 0.2,
    fitPercent: 90,
    spectralRadius: radius,
    rimDistance: 1 - radius,
    decayRatio: radius ** ((2 * Math.PI) / th),
    juryStable: radius < 1,
    dominant: { zeta: 0.3, wn: 0.4, timeConstant: null },
    gainHeadroom: 2,
    radiusSd: 0.003,
    forecast: null,
    modelPoles: [pole(radius, th), pole(radius, -th)],
    dataPoles: [],
    dataPolesKind: "disturbance-response",
    zeros: [{ re: -0.5, im: 0 }],
    characteristic: [1, -2 * radius * Math.cos(th), radius * radius],
    delaySamples: 1,
    last: null,
  };
}

function loop(id: number, state: LoopStateDto | null): LoopSummary {
  return {
    id,
    tenantId: 1,
    siteId: 1,
    siteName: "Site",
    area: null,
    tag: `T-${id}`,
    slug: `t-${id}`,
    description: "",
    kind: "flow",
    units: "%",
    pvLo: 0,
    pvHi: 100,
    estimationPeriodS: 1,
    state,
    alarms: [],
  };
}

/** A store whose "animation frame" runs when the test says so. */
function manualStore() {
  const frames: (() => void)[] = [];
  const store = new LoopStore((cb) => frames.push(cb));
  let renders = 0;
  store.subscribe(() => renders++);
  return {
    store,
    frame: () => {
      const due = frames.splice(0);
      for (const f of due) f();
      return due.length;
    },
    renders: () => renders,
    pendingFrames: () => frames.length,
  };
}

describe("loop store", () => {
  it("replaces a loop's full state from the API by a newer summary, and a summary by a newer full state", () => {
    const { store, frame } = manualStore();
    store.seed([loop(1, full(1, T0, 0.8)), loop(2, full(2, T0, 0.7))]);
    const b = toLoopBrief(full(1, T0 + 500, 0.85));
    store.enqueue([b]);
    // nothing applied before the frame
    expect(store.get(1)!.state!.spectralRadius).toBe(0.8);
    frame();
    expect(store.get(1)!.state).toBe(b);
    expect(store.get(1)!.state!.spectralRadius).toBe(0.85);
    // loop 2 untouched: same object as before (its tile is not re-rendered)
    expect(store.get(2)!.state!.spectralRadius).toBe(0.7);
    const f = full(1, T0 + 1000, 0.86);
    store.enqueue([f]);
    frame();
    expect(store.get(1)!.state).toBe(f);
    expect((store.get(1)!.state as LoopStateDto).zeros).toEqual([{ re: -0.5, im: 0 }]);
  });

  it("keeps the newer state when an older one arrives late (summary or full)", () => {
    const { store, frame } = manualStore();
    store.seed([loop(1, full(1, T0 + 2000, 0.8))]);
    store.enqueue([toLoopBrief(full(1, T0 + 1000, 0.9))]);
    frame();
    expect(store.get(1)!.state!.spectralRadius).toBe(0.8);
    store.enqueue([toLoopBrief(full(1, T0 + 3000, 0.91)), toLoopBrief(full(1, T0 + 2500, 0.5))]);
    frame();
    expect(store.get(1)!.state!.spectralRadius).toBe(0.91);
  });

  it("applies any number of batches in one frame with one notification, and ignores loops it does not know", () => {
    const { store, frame, renders, pendingFrames } = manualStore();
    store.seed([loop(1, null), loop(2, null)]);
    const r0 = renders();
    const v0 = store.version;
    const snap0 = store.getSnapshot();
    for (let k = 1; k <= 5; k++) store.enqueue([toLoopBrief(full(1, T0 + k * 500, 0.8 + k / 100)), toLoopBrief(full(99, T0 + k * 500, 0.5))]);
    expect(pendingFrames()).toBe(1);
    frame();
    expect(renders() - r0).toBe(1);
    expect(store.version).toBe(v0 + 1);
    expect(store.get(1)!.state!.spectralRadius).toBe(0.85);
    expect(store.get(99)).toBeUndefined();
    expect(store.getSnapshot()).not.toBe(snap0);
    expect(store.getSnapshot().map((l) => l.id)).toEqual([1, 2]);
    // a batch with only unknown loops changes nothing and notifies nobody
    const snap1 = store.getSnapshot();
    store.enqueue([toLoopBrief(full(99, T0 + 9000, 0.5))]);
    frame();
    expect(renders() - r0).toBe(1);
    expect(store.getSnapshot()).toBe(snap1);
  });

  it("keeps a live state newer than a fresh API answer, and takes the API's when it is newer", () => {
    const { store, frame } = manualStore();
    store.seed([loop(1, full(1, T0, 0.8)), loop(2, full(2, T0, 0.7))]);
    store.enqueue([toLoopBrief(full(1, T0 + 5000, 0.88)), toLoopBrief(full(2, T0 + 5000, 0.75))]);
    frame();
    const sv = store.structureVersion;
    store.seed([loop(1, full(1, T0 + 1000, 0.81)), loop(2, full(2, T0 + 9000, 0.72)), loop(3, null)]);
    expect(store.get(1)!.state!.spectralRadius).toBe(0.88);
    expect(store.get(2)!.state!.spectralRadius).toBe(0.72);
    expect(store.get(3)!.state).toBeNull();
    expect(store.structureVersion).toBe(sv + 1);
    // a loop gone from the API's answer is gone from the store
    store.seed([loop(1, full(1, T0 + 1000, 0.81))]);
    expect(store.get(2)).toBeUndefined();
  });

  it("records radius and decay ratio of every applied state in the sparkline ring, oldest first", () => {
    const { store, frame } = manualStore();
    store.seed([loop(1, null)]);
    const radii: number[] = [];
    for (let k = 1; k <= SPARK_POINTS + 7; k++) {
      const r = 0.5 + (k % 40) / 100;
      radii.push(r);
      store.enqueue([toLoopBrief(full(1, T0 + k * 500, r))]);
      frame();
    }
    const sp = store.spark(1)!;
    const got = sparkValues(sp, "radius");
    expect(got).toHaveLength(SPARK_POINTS);
    // Float32 ring: equal to the rounded summaries' radii at single precision
    expect(got).toEqual(radii.slice(-SPARK_POINTS).map((r) => Math.fround(r)));
    const dec = sparkValues(sp, "decay");
    const want = radii.slice(-SPARK_POINTS).map((r) => Math.fround(toLoopBrief(full(1, 0, r)).decayRatio!));
    expect(dec).toEqual(want);
  });

  it("replaces a loop's alarms at once (not on the next frame) and marks the list's structure as changed", () => {
    const { store, renders } = manualStore();
    store.seed([loop(1, null)]);
    const r0 = renders();
    const sv = store.structureVersion;
    store.setAlarms(1, [{ id: 7, condition: "margin", priority: "high", state: "unacknowledged" }]);
    expect(store.get(1)!.alarms).toHaveLength(1);
    expect(store.structureVersion).toBe(sv + 1);
    expect(renders() - r0).toBe(1);
    store.setAlarms(42, []);
    expect(renders() - r0).toBe(1);
  });

  it("takes summaries typed as the event map sends them", () => {
    const { store, frame } = manualStore();
    store.seed([loop(1, null)]);
    const batch: LoopStateBrief[] = [toLoopBrief(full(1, T0, 0.9))];
    store.enqueue(batch);
    frame();
    expect(store.get(1)!.state!.modelPoles.map((p) => Object.keys(p).sort())).toEqual([
      ["im", "radius", "re"],
      ["im", "radius", "re"],
    ]);
  });
});
