"use client";
/**
 * The small instruments of a loop tile: the rim gauge, the recent-trend sparkline and the small
 * z-plane. Same pictures as the RimGauge, Sparkline and compact ZPlaneMap (docs/visual-language.md), drawn with
 * as few SVG elements as possible (about 20 per tile instead of about 50): the wall repaints
 * every visible tile on each live batch and the bench trace showed style and layout of SVG
 * children as the largest cost of a frame. Canvases were tried and dropped: Chromium gives each
 * canvas a compositor layer, and layerizing ~150 of them cost more per frame than the SVG did.
 * Every path is one element (all loci in one path, all poles of a kind in one path); the grid of
 * the small z-plane is one memoised element per size and levels.
 */
import { memo, type ReactElement } from "react";
import { dampingLocus, naturalFrequencyLocus } from "@/lib/control/zplane";
import type { Complex } from "@/lib/control/types";
import type { PoleBrief } from "@/lib/domain/types";
import { fmt } from "@/lib/client/format";
import { SPARK_POINTS, type Spark } from "@/lib/client/loop-store";

// ---- rim gauge ---------------------------------------------------------------------------------

const GAUGE_MAX = 1.05;
const GAUGE_H = 18;

export interface GaugeProps {
  radius: number | null;
  warn: number | null;
  alarm: number | null;
  recentMin: number | null;
  recentMax: number | null;
  stale: boolean;
  width: number;
}

const f1 = (v: number) => Math.round(v * 10) / 10;

/** The compact rim gauge: bar to radius 1.05, the rim, warning (top) and alarm (bottom) notches, recent range, current radius. */
export const TileGauge = memo(function TileGauge({ radius, warn, alarm, recentMin, recentMax, stale, width: w }: GaugeProps) {
  const x = (r: number) => f1((Math.max(0, Math.min(GAUGE_MAX, r)) / GAUGE_MAX) * (w - 2) + 1);
  const rim = x(1);
  const beyond = radius !== null && (radius >= 1 || (alarm != null && radius >= alarm));
  const tick = stale ? "var(--rg-suppressed)" : beyond ? "var(--rg-urgent)" : "var(--rg-ink)";
  // the rim and the alarm notch share the ink colour: one path
  let ink = `M${rim - 1} 2h2v${GAUGE_H - 4}h-2Z`;
  if (alarm != null) {
    const xa = x(alarm);
    ink += `M${xa - 3.5} ${GAUGE_H - 1}L${xa + 3.5} ${GAUGE_H - 1}L${xa} ${GAUGE_H - 6}Z`;
  }
  const label = radius === null ? "no radius yet" : `spectral radius ${fmt(radius)}, rim distance ${fmt(1 - radius)}`;
  const recent = recentMin != null && recentMax != null && Number.isFinite(recentMin) && Number.isFinite(recentMax);
  return (
    <svg width={w} height={GAUGE_H} viewBox={`0 0 ${w} ${GAUGE_H}`} role="img" aria-label={label} style={{ flex: "none", display: "block" }}>
      <rect x="1" y="7" width={w - 2} height="4" fill="var(--rg-line)" />
      {recent && <rect x={x(recentMin)} y="5" width={Math.max(1, x(recentMax) - x(recentMin))} height="8" fill="var(--rg-muted)" opacity="0.3" />}
      <path d={ink} fill="var(--rg-ink)" />
      {warn != null && <path d={`M${x(warn) - 3} 2L${x(warn) + 3} 2L${x(warn)} 6Z`} fill="var(--rg-muted)" />}
      {radius !== null && <rect x={x(radius) - 1.5} y="3" width="3" height={GAUGE_H - 6} fill={tick} />}
    </svg>
  );
});

// ---- sparkline ---------------------------------------------------------------------------------

export interface SparkProps {
  spark: Spark | undefined;
  /** Number of values in the ring when this was rendered (a new value redraws). */
  n: number;
  which: "radius" | "decay";
  lo: number;
  hi: number;
  width: number;
  height: number;
  level: number | null;
  label: string;
}

/** A small trend of the ring's values, oldest left, on a fixed scale, with a dashed level. Reads the ring in place. */
export const TileSparkline = memo(function TileSparkline({ spark, n: count, which, lo, hi, width: w, height: h, level, label }: SparkProps) {
  const span = hi - lo || 1;
  const y = (v: number) => f1(h - 2 - ((Math.max(lo, Math.min(hi, v)) - lo) / span) * (h - 4));
  let d = "";
  if (spark) {
    const arr = spark[which];
    const n = Math.min(count, SPARK_POINTS);
    const start = count - n;
    let pen = false;
    for (let k = 0; k < n; k++) {
      const v = arr[(start + k) % SPARK_POINTS]!;
      if (!Number.isFinite(v)) {
        pen = false;
        continue;
      }
      const px = n <= 1 ? w : f1((k / (n - 1)) * w);
      d += `${pen ? "L" : "M"}${px} ${y(v)}`;
      pen = true;
    }
  }
  return (
    <svg width={w} height={h} viewBox={`0 0 ${w} ${h}`} role="img" aria-label={label} style={{ flex: "none", display: "block" }}>
      {level != null && level >= lo && level <= hi && <path d={`M0 ${y(level)}H${w}`} stroke="var(--rg-muted)" strokeDasharray="2 3" strokeWidth="1" />}
      {d && <path d={d} fill="none" stroke="var(--rg-ink)" strokeWidth="1.3" />}
    </svg>
  );
});

// ---- small z-plane -----------------------------------------------------------------------------

const R = 1.22;
const ZETAS = [0.2, 0.5, 0.8];
const WNTS = [0.25, 0.5, 0.75];
let loci: { zeta: Complex[][]; wn: Complex[][] } | null = null;
function lociOnce(): { zeta: Complex[][]; wn: Complex[][] } {
  if (!loci) loci = { zeta: ZETAS.map((z) => dampingLocus(z, 24)), wn: WNTS.map((w) => naturalFrequencyLocus(w * Math.PI, 12)) };
  return loci;
}

const grids = new Map<string, ReactElement>();
const GRID_CACHE_MAX = 1000;

/** The grid of a small map (band, axes, loci in two paths, unit circle): one element per key, shared by every tile. */
function gridFor(size: number, wr: number | null, ar: number | null): ReactElement {
  const key = `${size}|${wr}|${ar}`;
  let g = grids.get(key);
  if (g) return g;
  const half = size / 2;
  const k = half / R;
  const trace = (sets: Complex[][]) => {
    let d = "";
    for (const pts of sets)
      for (const sign of [1, -1])
        pts.forEach((p, i) => {
          d += `${i ? "L" : "M"}${f1(half + p.re * k)} ${f1(half - sign * p.im * k)}`;
        });
    return d;
  };
  const l = lociOnce();
  const ring = (r: number, sweep: 0 | 1) => `M${f1(half - r * k)} ${half}a${f1(r * k)} ${f1(r * k)} 0 1 ${sweep} ${f1(2 * r * k)} 0a${f1(r * k)} ${f1(r * k)} 0 1 ${sweep} ${f1(-2 * r * k)} 0Z`;
  g = (
    <>
      {wr != null && ar != null && ar > wr && <path d={ring(ar, 0) + ring(wr, 1)} fill="var(--rg-high)" fillRule="evenodd" opacity="0.08" />}
      <path d={`M${f1(half - R * k)} ${half}H${f1(half + R * k)}M${half} ${f1(half - R * k)}V${f1(half + R * k)}`} stroke="var(--rg-line)" strokeWidth="1" />
      <path d={trace(l.zeta)} stroke="var(--rg-line)" strokeWidth="0.8" fill="none" opacity="0.9" />
      <path d={trace(l.wn)} stroke="var(--rg-line)" strokeWidth="0.8" fill="none" opacity="0.9" strokeDasharray="2 2" />
      <circle cx={half} cy={half} r={f1(k)} fill="none" stroke="var(--rg-ink)" strokeWidth="1.4" />
    </>
  );
  if (grids.size >= GRID_CACHE_MAX) grids.clear();
  grids.set(key, g);
  return g;
}

export interface ZPlaneMiniProps {
  modelPoles: readonly PoleBrief[];
  dataPoles: readonly PoleBrief[];
  dataPolesKind: "closed-loop" | "disturbance-response";
  warnRadius: number | null;
  alarmRadius: number | null;
  size: number;
  stale: boolean;
}

/** The small z-plane of a tile: model-based poles as bold ×, data-only poles as thin +, red only outside the circle. */
export const ZPlaneMini = memo(function ZPlaneMini({ modelPoles, dataPoles, dataPolesKind, warnRadius, alarmRadius, size, stale }: ZPlaneMiniProps) {
  // levels rounded to 1/500 (under a pixel here), so small moves of the dominant angle reuse the grid
  const wr = warnRadius == null ? null : Math.round(warnRadius * 500) / 500;
  const ar = alarmRadius == null ? null : Math.round(alarmRadius * 500) / 500;
  const half = size / 2;
  const k = half / R;
  const arm = 3.5;
  let plus = "";
  for (const z of dataPoles) {
    const x = f1(half + z.re * k);
    const y = f1(half - z.im * k);
    plus += `M${x - arm} ${y}H${x + arm}M${x} ${y - arm}V${y + arm}`;
  }
  let inside = "";
  let outside = "";
  for (const z of modelPoles) {
    const x = f1(half + z.re * k);
    const y = f1(half - z.im * k);
    const cross = `M${x - arm} ${y - arm}L${x + arm} ${y + arm}M${x - arm} ${y + arm}L${x + arm} ${y - arm}`;
    if (Math.hypot(z.re, z.im) >= 1 && !stale) outside += cross;
    else inside += cross;
  }
  const ink = stale ? "var(--rg-suppressed)" : "var(--rg-ink)";
  const fmtZ = (z: PoleBrief) => `${z.re.toFixed(3)}${z.im >= 0 ? "+" : "-"}${Math.abs(z.im).toFixed(3)}j`;
  const label = `z-plane: ${modelPoles.length} model-based pole(s) ${modelPoles.map(fmtZ).join(", ")}; ${dataPoles.length} ${dataPolesKind === "closed-loop" ? "data-only" : "disturbance-response"} pole(s)`;
  return (
    <svg width={size} height={size} viewBox={`0 0 ${size} ${size}`} role="img" aria-label={label} style={{ flex: "none", display: "block" }}>
      {gridFor(size, wr, ar)}
      {plus && <path d={plus} stroke={ink} strokeWidth="1" data-kind={`data-pole-${dataPolesKind}`} />}
      {inside && <path d={inside} stroke={ink} strokeWidth="2" strokeLinecap="round" data-kind="model-pole" />}
      {outside && <path d={outside} stroke="var(--rg-urgent)" strokeWidth="2" strokeLinecap="round" data-kind="model-pole" />}
    </svg>
  );
});
