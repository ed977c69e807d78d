/**
 * What a plant historian does to a recording before an engineer exports it: exception
 * (dead-band) compression of PV and MV, exported either as the last stored value or linearly
 * interpolated between stored values, and gaps where rows are missing (a collector outage).
 * Both are common practice in historians; the dead bands used here are ours.
 */
import type { Prng } from "../prng";
import type { RecordedSample, RecordingTruth } from "./recording-sim";

export interface HistorianEffects {
  /** Dead bands in engineering units (PV) and % (MV); null = stored raw. */
  compression: { pvDeadband: number; mvDeadband: number; export: "hold" | "interpolate" } | null;
  /** Missing rows: [from, to) sample index ranges. */
  gaps: [number, number][];
}

/** Indices a dead-band historian stores: the first, every value more than `db` from the last stored, the last. */
function storedIndices(xs: number[], db: number): number[] {
  const out = [0];
  let last = xs[0]!;
  for (let k = 1; k < xs.length - 1; k++) {
    if (Math.abs(xs[k]! - last) > db) {
      out.push(k);
      last = xs[k]!;
    }
  }
  if (xs.length > 1) out.push(xs.length - 1);
  return out;
}

function reconstruct(xs: number[], db: number, mode: "hold" | "interpolate"): number[] {
  const idx = storedIndices(xs, db);
  const out = new Array<number>(xs.length);
  for (let j = 0; j < idx.length; j++) {
    const a = idx[j]!;
    const b = idx[j + 1] ?? a + 1;
    for (let k = a; k < Math.min(b, xs.length); k++) {
      out[k] = mode === "hold" || b >= xs.length ? xs[a]! : xs[a]! + ((xs[b]! - xs[a]!) * (k - a)) / (b - a);
    }
  }
  return out;
}

/** Draw the historian's effects for a recording of n samples. */
export function drawHistorian(rng: Prng, n: number, pvSpan: number, noiseSdPct: number, compress: boolean, gaps: boolean): HistorianEffects {
  const out: HistorianEffects = { compression: null, gaps: [] };
  if (compress) {
    out.compression = {
      pvDeadband: (pvSpan * noiseSdPct * rng.uniform(1, 3)) / 100,
      mvDeadband: rng.uniform(0.2, 1),
      export: rng.chance(0.5) ? "hold" : "interpolate",
    };
  }
  if (gaps) {
    const count = 1 + Math.floor(rng.next() * 3);
    for (let i = 0; i < count; i++) {
      const len = Math.max(2, Math.round(n * rng.uniform(0.005, 0.04)));
      const from = Math.floor(rng.uniform(0.1, 0.9) * (n - len));
      out.gaps.push([from, from + len]);
    }
  }
  return out;
}

/** Apply the effects: compressed values replace raw ones; rows in gaps go from samples and truth alike. */
export function applyHistorian(samples: RecordedSample[], truth: RecordingTruth, fx: HistorianEffects): { samples: RecordedSample[]; truth: RecordingTruth } {
  let out = samples;
  if (fx.compression) {
    const c = fx.compression;
    const pv = reconstruct(samples.map((s) => s.pv), c.pvDeadband, c.export);
    const mv = reconstruct(samples.map((s) => s.mv), c.mvDeadband, c.export);
    out = samples.map((s, k) => ({ ...s, pv: pv[k]!, mv: mv[k]! }));
  }
  if (fx.gaps.length === 0) return { samples: out, truth };
  const keep = new Uint8Array(out.length).fill(1);
  for (const [a, b] of fx.gaps) keep.fill(0, a, b);
  const idx: number[] = [];
  for (let k = 0; k < keep.length; k++) if (keep[k]) idx.push(k);
  const pick32 = (x: Float32Array) => Float32Array.from(idx, (k) => x[k]!);
  return {
    samples: idx.map((k) => out[k]!),
    truth: {
      mvPct: pick32(truth.mvPct),
      valvePct: pick32(truth.valvePct),
      loadPct: pick32(truth.loadPct),
      sinePct: pick32(truth.sinePct),
      pvTruePct: pick32(truth.pvTruePct),
      fault: Uint8Array.from(idx, (k) => truth.fault[k]!),
      slips: truth.slips,
    },
  };
}
