import { describe, expect, it } from "vitest";
import { parseHistory } from "@/lib/client/history";

// The chart's history reader takes the same data as rows or as columns; both shapes must give the
// same columns (an identity of the reader, no outside reference needed). Values are invented.

const T0 = Date.UTC(2026, 10, 30, 6, 0, 0);

function rowsBody() {
  return {
    points: [
      { t: T0, sp: 50, pv: 49.5, mv: 41.2, radius: 0.91 },
      { t: new Date(T0 + 60_000).toISOString(), sp: { min: 50, mean: 51, max: 52 }, pv: { min: 48, mean: 49, max: 50 }, mv: { min: 40, mean: 41, max: 42 }, radius: { min: 0.9, mean: 0.92, max: 0.95 } },
      { t: T0 + 120_000, sp: null, pv: Number.NaN, mv: 43, radius: null },
    ],
    poles: [{ t: T0 + 60_000, radius: 0.92, decayRatio: 0.2, poles: { model: [{ re: 0.9, im: 0.1 }], data: [] } }],
  };
}

function columnsBody() {
  const r = rowsBody();
  return {
    t: r.points.map((p) => p.t),
    sp: r.points.map((p) => p.sp),
    pv: r.points.map((p) => p.pv),
    mv: r.points.map((p) => p.mv),
    radius: r.points.map((p) => p.radius),
    poles: r.poles,
  };
}

describe("parseHistory reads rows and columns alike", () => {
  it("gives the same columns and snapshots for both shapes", () => {
    const a = parseHistory(rowsBody());
    const b = parseHistory(columnsBody());
    expect(Array.from(b.cols.t)).toEqual(Array.from(a.cols.t));
    for (const k of ["sp", "pv", "mv", "radius", "radiusMin", "radiusMax"] as const) expect(b.cols[k]).toEqual(a.cols[k]);
    expect(b.snapshots).toEqual(a.snapshots);
  });

  it("converts times to seconds, takes the mean of a statistic and the min/max for the radius band, and turns non-finite values into gaps", () => {
    const { cols } = parseHistory(columnsBody());
    expect(Array.from(cols.t)).toEqual([T0 / 1000, T0 / 1000 + 60, T0 / 1000 + 120]);
    expect(cols.sp).toEqual([50, 51, null]);
    expect(cols.pv).toEqual([49.5, 49, null]);
    expect(cols.radius).toEqual([0.91, 0.92, null]);
    expect(cols.radiusMin).toEqual([0.91, 0.9, null]);
    expect(cols.radiusMax).toEqual([0.91, 0.95, null]);
  });

  it("reads a missing column as gaps, not as zeros", () => {
    const { cols } = parseHistory({ t: [T0, T0 + 1000], pv: [1, 2] });
    expect(cols.pv).toEqual([1, 2]);
    expect(cols.sp).toEqual([null, null]);
    expect(cols.radius).toEqual([null, null]);
  });
});
