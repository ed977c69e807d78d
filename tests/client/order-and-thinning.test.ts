/**
 * Browser-side pure functions: worst-first ordering (docs/visual-language.md, Principles, "Worst first") and the per-pixel
 * min/max thinning of trend data. The expected values are computed here by brute force from the
 * definitions, independently of the code under test.
 */
import { describe, expect, it } from "vitest";
import { thinAligned } from "@/lib/client/history";
import { WorstFirstOrder, sortWorstFirst, stableWorstFirst } from "@/lib/client/order";
import type { RoutineFindings } from "@/lib/domain/findings";
import type { AlarmPriority, LoopStateDto, LoopSummary } from "@/lib/domain/types";

function loop(id: number, tag: string, decayRatio: number | null, radius: number | null, alarm?: AlarmPriority, routine?: Pick<RoutineFindings, "label" | "confidence">): LoopSummary {
  const state = radius === null && !routine ? null : ({ spectralRadius: radius, decayRatio, juryStable: radius === null ? null : radius < 1, rimDistance: radius === null ? null : 1 - radius, routine: routine ? { at: 0, needsS: null, ...routine } : undefined } as unknown as LoopStateDto);
  return {
    id, tenantId: 1, siteId: 1, siteName: "Site", area: null, tag, slug: tag.toLowerCase(), description: "", kind: "flow",
    units: "m3/h", pvLo: 0, pvHi: 100, estimationPeriodS: 1, state,
    alarms: alarm ? [{ id: id * 10, condition: "margin", priority: alarm, state: "unacknowledged" }] : [],
  };
}

describe("worst-first order", () => {
  const loops = [
    loop(1, "FIC-1", 0.1, 0.8),
    loop(2, "FIC-2", 0.45, 0.95),
    loop(3, "FIC-3", null, 0.99), // does not oscillate: after every oscillating loop
    loop(4, "FIC-4", 0.2, 0.9, "low"),
    loop(5, "FIC-5", 0.05, 0.7, "urgent"),
    loop(6, "FIC-6", null, 1.02), // past the circle: first among loops without an alarm
    loop(7, "FIC-7", null, null), // no estimate yet: last
  ];

  it("puts alarm priority first, then the smallest margin to the alarm level, loops without an estimate last", () => {
    expect(sortWorstFirst(loops).map((l) => l.tag)).toEqual(["FIC-5", "FIC-4", "FIC-6", "FIC-2", "FIC-1", "FIC-3", "FIC-7"]);
  });

  it("the stable order agrees with the plain one when nothing ties within a margin step", () => {
    expect(stableWorstFirst(loops, null).map((l) => l.tag)).toEqual(sortWorstFirst(loops).map((l) => l.tag));
  });

  it("does not reshuffle loops whose margins move by noise inside one step", () => {
    const order = new WorstFirstOrder();
    // Margins to the 0.5 level: 0.191 and 0.199, the same 0.02 step: first time, tag order.
    const a = loop(11, "PIC-A", 0.309, 0.9);
    const b = loop(12, "PIC-B", 0.301, 0.9);
    expect(order.sort([b, a]).map((l) => l.tag)).toEqual(["PIC-A", "PIC-B"]);
    // Noise makes B the slightly worse one, still inside the same step: the places hold.
    const a2 = loop(11, "PIC-A", 0.3005, 0.9);
    const b2 = loop(12, "PIC-B", 0.3095, 0.9);
    expect(order.sort([b2, a2]).map((l) => l.tag)).toEqual(["PIC-A", "PIC-B"]);
    // A real change (B two steps closer to its level) moves it ahead.
    const b3 = loop(12, "PIC-B", 0.36, 0.9);
    expect(order.sort([a2, b3]).map((l) => l.tag)).toEqual(["PIC-B", "PIC-A"]);
  });

  it("puts a loop whose finding is engineering work after alarms and loops past their level, before the others (margin order kept within each group)", () => {
    const withFindings = [
      loop(21, "FIC-21", 0.1, 0.8, undefined, { label: "valve-stiction", confidence: 0.8 }),
      loop(22, "FIC-22", 0.45, 0.95), // smallest margin of the loops without a finding
      loop(23, "FIC-23", 0.3, 0.9, undefined, { label: "healthy", confidence: 0.9 }), // healthy is not work
      loop(24, "FIC-24", 0.05, 0.7, "low"), // an alarm outranks any finding
      loop(25, "FIC-25", null, 1.02), // past the circle, no alarm yet: before any finding
      loop(26, "FIC-26", 0.2, 0.85, undefined, { label: "sluggish-tuning", confidence: 0.7 }),
      loop(27, "FIC-27", 0.4, 0.9, undefined, { label: "valve-stiction", confidence: 0.5 }), // too weak to open an item
      loop(28, "FIC-28", null, null, undefined, { label: "manual", confidence: 0.9 }), // no estimate, but in manual: work
    ];
    // margins to the 0.5 level: FIC-21 0.4, FIC-26 0.3, FIC-28 none (+inf); FIC-22 0.05, FIC-27 0.1, FIC-23 0.2
    const want = ["FIC-24", "FIC-25", "FIC-26", "FIC-21", "FIC-28", "FIC-22", "FIC-27", "FIC-23"];
    expect(sortWorstFirst(withFindings).map((l) => l.tag)).toEqual(want);
    expect(stableWorstFirst(withFindings, null).map((l) => l.tag)).toEqual(want);
  });
});

describe("per-pixel min/max thinning of aligned trend columns", () => {
  // A 24 h day at 1 Hz with a sine, noise-free, and one spike that must survive.
  const n = 86_400;
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    x[i] = i;
    y[i] = Math.sin((2 * Math.PI * i) / 3600);
  }
  y[43_210] = 10;
  const columns = 800;
  const { data, thinned } = thinAligned([x, y], columns);

  it("thins to at most two points per pixel column", () => {
    expect(thinned).toBe(true);
    expect(data[0]!.length).toBeLessThanOrEqual(2 * columns + 2);
    expect(data[1]!.length).toBe(data[0]!.length);
  });

  it("keeps the minimum and maximum of every column (checked by brute force) and the spike", () => {
    const col = (t: number) => Math.floor((t / (n - 1)) * columns);
    const want = new Map<number, [number, number]>();
    for (let i = 0; i < n; i++) {
      const c = col(x[i]!);
      const m = want.get(c) ?? [Infinity, -Infinity];
      want.set(c, [Math.min(m[0], y[i]!), Math.max(m[1], y[i]!)]);
    }
    const got = new Map<number, [number, number]>();
    const tx = data[0]!;
    const ty = data[1]!;
    for (let i = 0; i < tx.length; i++) {
      const c = col(tx[i] as number);
      const v = ty[i] as number;
      const m = got.get(c) ?? [Infinity, -Infinity];
      got.set(c, [Math.min(m[0], v), Math.max(m[1], v)]);
    }
    expect(got.size).toBe(want.size);
    for (const [c, [lo, hi]] of want) {
      expect(got.get(c)).toEqual([lo, hi]);
    }
    expect(Math.max(...Array.from(ty as ArrayLike<number>))).toBe(10);
    expect(tx[0]).toBe(0);
    expect(tx[tx.length - 1]).toBe(n - 1);
  });

  it("leaves short series alone and keeps gaps as null", () => {
    const short = thinAligned([[0, 1, 2], [1, null, 3]], 100);
    expect(short.thinned).toBe(false);
    expect(Array.from(short.data[1]!)).toEqual([1, null, 3]);
  });
});

describe("thinning twice: the loop detail's per-answer thinning, then the chart's own", () => {
  // The loop detail thins a 24 h answer once to `columns` buckets over the data's span, then the
  // chart thins again for its own pixel grid (a no-op when the first pass already fits). Checked
  // by brute force on 86,400 points: each display column shows the raw min and max of its time
  // range, up to the shift of a column of each pass (values are drawn at column edges).
  const n = 86_400;
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  let s = 12345;
  for (let i = 0; i < n; i++) {
    s = (s * 1103515245 + 12345) % 2147483648;
    x[i] = 1_700_000_000 + i;
    y[i] = 50 + 5 * Math.sin(i / 700) + ((s / 2147483648) - 0.5);
  }
  const spikes = [1234, 40_000, 86_000];
  y[spikes[0]!] = 90;
  y[spikes[1]!] = 5;
  y[spikes[2]!] = 77;
  const columns = 1234;
  const once = thinAligned([x, y], columns).data;
  const twice = thinAligned(once, 600).data;

  // thinAligned draws a column's min and max at the column's first and last time, so a value
  // may move by up to one column of each pass (the first pass's and the chart's).
  const x0 = x[0]!;
  const span = x[n - 1]! - x0;
  const shift = span / columns + span / 600;

  it("keeps every spike's value through both passes, within one column of each pass of its time", () => {
    const tx = twice[0] as ArrayLike<number>;
    const ty = twice[1] as ArrayLike<number>;
    for (const i of spikes) {
      let found = false;
      for (let k = 0; k < tx.length; k++) if (ty[k] === y[i] && Math.abs(tx[k]! - x[i]!) <= shift) found = true;
      expect(found, `spike at ${i}`).toBe(true);
    }
    expect(Math.max(...Array.from(ty))).toBe(90);
    expect(Math.min(...Array.from(ty))).toBe(5);
  });

  it("shows in each of 300 display columns the raw extremes of that column's time range (to one column of each pass)", () => {
    const P = 300;
    const bucket = shift;
    const tx = twice[0] as ArrayLike<number>;
    const ty = twice[1] as ArrayLike<number>;
    for (let p = 0; p < P; p++) {
      const a = x0 + (p * span) / P;
      const b = x0 + ((p + 1) * span) / P;
      let rawLo = Infinity;
      let rawHi = -Infinity;
      for (let i = 0; i < n; i++) {
        if (x[i]! < a || x[i]! >= b) continue;
        rawLo = Math.min(rawLo, y[i]!);
        rawHi = Math.max(rawHi, y[i]!);
      }
      // drawn points within the column widened by one column of each pass on each side
      let lo = Infinity;
      let hi = -Infinity;
      for (let k = 0; k < tx.length; k++) {
        if (tx[k]! < a - bucket || tx[k]! >= b + bucket) continue;
        lo = Math.min(lo, ty[k]!);
        hi = Math.max(hi, ty[k]!);
      }
      expect(lo).toBeLessThanOrEqual(rawLo);
      expect(hi).toBeGreaterThanOrEqual(rawHi);
    }
  });
});
