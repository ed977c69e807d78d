/**
 * The history API's answer turned into uPlot columns (x in seconds). Accepts rows
 * (`points: [{ t, sp, pv, mv, radius }]`, each value a number or `{ min, mean, max }`, or flat
 * `spMean`-style fields) or columns (`t: [], sp: [] ...`), and pole snapshots under `poles` or
 * `snapshots`.
 */
import "client-only";
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
  else if (Array.isArray(b.t)) return { cols: parseColumns(b), snapshots: parseSnapshots(b) };
  const n = rows.length;
  const cols = newColumns(n);
  // Raw rows (plain numbers) take the short path: a 24 h answer at 1 Hz is 86,400 rows.
  const num = (v: unknown): number | null | undefined => (typeof v === "number" ? (Number.isFinite(v) ? v : null) : undefined);
  for (let i = 0; i < n; i++) {
    const r = rows[i]!;
    const t = r.t;
    cols.t[i] = (typeof t === "number" ? t : toMs(t ?? r.time ?? r.at)) / 1000;
    const sp = num(r.sp);
    cols.sp[i] = sp !== undefined ? sp : pick(r, "sp");
    const pv = num(r.pv);
    cols.pv[i] = pv !== undefined ? pv : pick(r, "pv");
    const mv = num(r.mv);
    cols.mv[i] = mv !== undefined ? mv : pick(r, "mv");
    const radius = num(r.radius);
    if (radius !== undefined && radius !== null) {
      cols.radius[i] = radius;
      cols.radiusMin[i] = radius;
      cols.radiusMax[i] = radius;
    } else {
      cols.radius[i] = pick(r, "radius") ?? pick(r, "spectralRadius");
      cols.radiusMin[i] = pick(r, "radius", "min");
      cols.radiusMax[i] = pick(r, "radius", "max");
    }
  }
  return { cols, snapshots: parseSnapshots(b) };
}

function newColumns(n: number): HistoryColumns {
  return { t: new Float64Array(n), sp: new Array(n), pv: new Array(n), mv: new Array(n), radius: new Array(n), radiusMin: new Array(n), radiusMax: new Array(n) };
}

/** One cell of a columnar answer: a number, or a `{ min, mean, max }` statistic. */
function cell(v: unknown, stat: "mean" | "min" | "max"): number | null {
  if (typeof v === "number") return Number.isFinite(v) ? v : null;
  return v && typeof v === "object" ? pick({ v }, "v", stat) : null;
}

/**
 * Columnar answers (`t: [...]`, `sp: [...]`, ... of equal length; a missing column reads as
 * gaps): copied column by column, without building a row object per point.
 */
function parseColumns(b: Record<string, unknown>): HistoryColumns {
  const t = b.t as unknown[];
  const n = t.length;
  const cols = newColumns(n);
  for (let i = 0; i < n; i++) {
    const v = t[i];
    cols.t[i] = (typeof v === "number" ? v : toMs(v)) / 1000;
  }
  const fill = (name: string, into: (number | null)[], stat: "mean" | "min" | "max") => {
    const src = b[name];
    if (!Array.isArray(src)) {
      into.fill(null);
      return;
    }
    for (let i = 0; i < n; i++) {
      const v: unknown = src[i];
      into[i] = typeof v === "number" ? (Number.isFinite(v) ? v : null) : cell(v, stat);
    }
  };
  // `sp` or the API's `spMean` (GET /api/loops/[id]/history?shape=columns), and so on
  const mean = (name: string) => (Array.isArray(b[name]) ? name : `${name}Mean`);
  fill(mean("sp"), cols.sp, "mean");
  fill(mean("pv"), cols.pv, "mean");
  fill(mean("mv"), cols.mv, "mean");
  const radius = Array.isArray(b.radius) ? "radius" : Array.isArray(b.radiusMean) ? "radiusMean" : "spectralRadius";
  fill(radius, cols.radius, "mean");
  if (Array.isArray(b.radiusMin)) fill("radiusMin", cols.radiusMin, "min");
  else fill(radius, cols.radiusMin, "min");
  if (Array.isArray(b.radiusMax)) fill("radiusMax", cols.radiusMax, "max");
  else fill(radius, cols.radiusMax, "max");
  return cols;
}

function parseSnapshots(b: Record<string, unknown>): PoleSnapshot[] {
  const snapRaw = b.poles ?? b.snapshots ?? b.poleSnapshots;
  return Array.isArray(snapRaw)
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

type Column = ArrayLike<number | null | undefined>;

/**
 * Thin aligned chart data (x in the first column) to about `columns` time columns before it
 * reaches the chart: each column keeps its first and last x, and every series keeps its min and
 * max in the order they occurred, so peaks and steps survive and a line looks as drawn from all
 * points. Columns are by time, so lone points far off (a forecast) keep their own column. Data
 * with fewer than 4 points per column is returned as it is.
 */
export function thinAligned(data: readonly Column[], columns: number): { data: Column[]; thinned: boolean } {
  const x = data[0];
  const n = x?.length ?? 0;
  if (!x || n <= 4 * columns || columns < 1) return { data: data as Column[], thinned: false };
  const x0 = x[0] as number;
  const span = (x[n - 1] as number) - x0 || 1;
  const ns = data.length - 1;
  const outX = new Float64Array(2 * columns + 64);
  let cap = outX.length;
  let ox: Float64Array = outX;
  const outY: (number | null)[][] = Array.from({ length: ns }, () => []);
  let k = 0;
  const push = (i: number) => {
    if (k >= cap) {
      const g = new Float64Array(cap * 2);
      g.set(ox);
      ox = g;
      cap = g.length;
    }
    ox[k++] = x[i] as number;
  };
  let s = 0;
  while (s < n) {
    const col = Math.floor((((x[s] as number) - x0) / span) * columns);
    let e = s + 1;
    while (e < n && Math.floor((((x[e] as number) - x0) / span) * columns) === col) e++;
    if (e - s === 1) {
      push(s);
      for (let j = 0; j < ns; j++) outY[j]!.push((data[j + 1]![s] as number | null | undefined) ?? null);
    } else {
      push(s);
      push(e - 1);
      for (let j = 0; j < ns; j++) {
        const y = data[j + 1]!;
        let iMin = -1;
        let iMax = -1;
        for (let i = s; i < e; i++) {
          const v = y[i];
          if (v == null || !Number.isFinite(v)) continue;
          if (iMin < 0 || v < (y[iMin] as number)) iMin = i;
          if (iMax < 0 || v > (y[iMax] as number)) iMax = i;
        }
        const out = outY[j]!;
        if (iMin < 0) out.push(null, null);
        else if (iMin <= iMax) out.push(y[iMin] as number, y[iMax] as number);
        else out.push(y[iMax] as number, y[iMin] as number);
      }
    }
    s = e;
  }
  return { data: [ox.subarray(0, k), ...outY], thinned: true };
}
