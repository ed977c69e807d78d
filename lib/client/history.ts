/**
 * The history API's answer turned into uPlot columns (x in seconds). Accepts rows
 * (`points: [{ t, sp, pv, mv, radius }]`, each value a number or `{ min, mean, max }`, or flat
 * `spMean`-style fields) or columns (`t: [], sp: [] ...`), and pole snapshots under `poles` or
 * `snapshots`.
 */
import type { Complex } from "@/lib/control/types";

export interface HistoryColumns {
  t: Float64Array;
  sp: (number | null)[];
  pv: (number | null)[];
  mv: (number | null)[];
  radius: (number | null)[];
  radiusMin: (number | null)[];
  radiusMax: (number | null)[];
}

export interface PoleSnapshot {
  t: number;
  radius: number | null;
  decayRatio: number | null;
  poles: Complex[];
  dataPoles: Complex[];
}

const toMs = (t: unknown): number => (typeof t === "number" ? t : typeof t === "string" ? Date.parse(t) : NaN);

function pick(row: Record<string, unknown>, name: string, stat: "mean" | "min" | "max" = "mean"): number | null {
  const v = row[name];
  if (typeof v === "number") return Number.isFinite(v) ? v : null;
  if (v && typeof v === "object") {
    const o = v as Record<string, unknown>;
    const x = o[stat] ?? o.mean ?? o.avg;
    return typeof x === "number" && Number.isFinite(x) ? x : null;
  }
  const cap = name.charAt(0).toUpperCase() + name.slice(1);
  for (const k of [`${name}${stat.charAt(0).toUpperCase()}${stat.slice(1)}`, `${name}_${stat}`, `${stat}${cap}`]) {
    const x = row[k];
    if (typeof x === "number" && Number.isFinite(x)) return x;
  }
  if (stat !== "mean") return null;
  return null;
}

function complexList(v: unknown): Complex[] {
  if (!Array.isArray(v)) return [];
  return v.filter((p): p is Complex => !!p && typeof p === "object" && typeof (p as Complex).re === "number" && typeof (p as Complex).im === "number");
}

export function parseHistory(body: unknown): { cols: HistoryColumns; snapshots: PoleSnapshot[] } {
  const b = (body ?? {}) as Record<string, unknown>;
  let rows: Record<string, unknown>[] = [];
  const cand = b.points ?? b.samples ?? b.rows ?? b.data;
  if (Array.isArray(cand)) rows = cand as Record<string, unknown>[];
  else if (Array.isArray(b.t)) {
    const n = (b.t as unknown[]).length;
    rows = Array.from({ length: n }, (_, i) => {
      const r: Record<string, unknown> = {};
      for (const [k, v] of Object.entries(b)) if (Array.isArray(v)) r[k] = v[i];
      return r;
    });
  }
  const n = rows.length;
  const cols: HistoryColumns = { t: new Float64Array(n), sp: new Array(n), pv: new Array(n), mv: new Array(n), radius: new Array(n), radiusMin: new Array(n), radiusMax: new Array(n) };
  rows.forEach((r, i) => {
    cols.t[i] = toMs(r.t ?? r.time ?? r.at) / 1000;
    cols.sp[i] = pick(r, "sp");
    cols.pv[i] = pick(r, "pv");
    cols.mv[i] = pick(r, "mv");
    cols.radius[i] = pick(r, "radius") ?? pick(r, "spectralRadius");
    cols.radiusMin[i] = pick(r, "radius", "min");
    cols.radiusMax[i] = pick(r, "radius", "max");
  });
  const snapRaw = b.poles ?? b.snapshots ?? b.poleSnapshots;
  const snapshots: PoleSnapshot[] = Array.isArray(snapRaw)
    ? (snapRaw as Record<string, unknown>[])
        .map((s) => {
          const poles = s.poles as unknown;
          const model = Array.isArray(poles) ? complexList(poles) : complexList((poles as Record<string, unknown> | null)?.model ?? (s.modelPoles as unknown));
          const data = Array.isArray(poles) ? complexList(s.dataPoles) : complexList((poles as Record<string, unknown> | null)?.data ?? (s.dataPoles as unknown));
          return {
            t: toMs(s.t ?? s.at),
            radius: typeof s.radius === "number" ? s.radius : null,
            decayRatio: typeof s.decayRatio === "number" ? s.decayRatio : typeof s.decay_ratio === "number" ? (s.decay_ratio as number) : null,
            poles: model,
            dataPoles: data,
          };
        })
        .filter((s) => Number.isFinite(s.t))
        .sort((x, y) => x.t - y.t)
    : [];
  return { cols, snapshots };
}

/** The snapshot at or just before time t (ms); binary search. */
export function snapshotAt(snaps: PoleSnapshot[], t: number): PoleSnapshot | null {
  let lo = 0;
  let hi = snaps.length - 1;
  let best: PoleSnapshot | null = null;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    const s = snaps[mid]!;
    if (s.t <= t) {
      best = s;
      lo = mid + 1;
    } else hi = mid - 1;
  }
  return best ?? snaps[0] ?? null;
}

/**
 * Thin raw points to about `width` buckets, keeping each bucket's min and max (so peaks survive),
 * as the chart should never get more points than pixels. Columns in, columns out.
 */
export function thinMinMax(t: Float64Array, y: Float64Array, width: number): { t: Float64Array; y: Float64Array } {
  const n = t.length;
  if (n <= 2 * width) return { t, y };
  const outT = new Float64Array(2 * width);
  const outY = new Float64Array(2 * width);
  const per = n / width;
  let k = 0;
  for (let b = 0; b < width; b++) {
    const s = Math.floor(b * per);
    const e = Math.min(n, Math.floor((b + 1) * per));
    let iMin = s;
    let iMax = s;
    for (let i = s + 1; i < e; i++) {
      if (y[i]! < y[iMin]!) iMin = i;
      if (y[i]! > y[iMax]!) iMax = i;
    }
    const [a, c] = iMin < iMax ? [iMin, iMax] : [iMax, iMin];
    outT[k] = t[a]!;
    outY[k++] = y[a]!;
    outT[k] = t[c]!;
    outY[k++] = y[c]!;
  }
  return { t: outT.subarray(0, k), y: outY.subarray(0, k) };
}
