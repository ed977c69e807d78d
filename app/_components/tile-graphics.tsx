"use client";
/**
 * The small instruments of a loop tile drawn on canvases: the rim gauge, the recent-trend
 * sparkline and the small z-plane. Same pictures as the SVG RimGauge, Sparkline and compact
 * ZPlaneMap (UI.md), one element each instead of twenty-odd: the wall mounts a row of tiles on
 * every scroll step and repaints the visible ones on every live batch, and the bench trace showed
 * style and layout of the SVG children as the largest cost of a frame. The z-plane grid (loci,
 * band, circle) is drawn once per size, levels and theme into an offscreen canvas and copied.
 * Colours are the theme's roles, read from the nearest `data-theme` element once per theme.
 */
import { memo, useLayoutEffect, useRef } from "react";
import { dampingLocus, naturalFrequencyLocus } from "@/lib/control/zplane";
import type { Complex } from "@/lib/control/types";
import type { PoleBrief } from "@/lib/types";
import { fmt } from "@/lib/client/format";
import { SPARK_POINTS, type Spark } from "@/lib/client/loop-store";

interface Palette {
  ink: string;
  muted: string;
  line: string;
  urgent: string;
  high: string;
  suppressed: string;
}

const palettes = new Map<string, Palette>();

function paletteFor(el: HTMLElement): Palette {
  const host = (el.closest("[data-theme]") as HTMLElement | null) ?? document.documentElement;
  const key = host.getAttribute("data-theme") ?? "default";
  let p = palettes.get(key);
  if (!p) {
    const cs = getComputedStyle(host);
    const v = (name: string, fallback: string) => cs.getPropertyValue(name).trim() || fallback;
    p = { ink: v("--rg-ink", "#e4e8ec"), muted: v("--rg-muted", "#a9b2bc"), line: v("--rg-line", "#414a55"), urgent: v("--rg-urgent", "#ff7a8a"), high: v("--rg-high", "#f0b049"), suppressed: v("--rg-suppressed", "#a2abb5") };
    palettes.set(key, p);
  }
  return p;
}

const dprOf = () => Math.min(2, typeof window === "undefined" ? 1 : window.devicePixelRatio || 1);

/** Size the canvas for the device pixel ratio, clear it and hand a CSS-pixel context to `draw`. */
function paint(c: HTMLCanvasElement | null, w: number, h: number, draw: (ctx: CanvasRenderingContext2D, pal: Palette, dpr: number) => void): void {
  if (!c) return;
  const dpr = dprOf();
  const pw = Math.round(w * dpr);
  const ph = Math.round(h * dpr);
  if (c.width !== pw || c.height !== ph) {
    c.width = pw;
    c.height = ph;
  }
  const ctx = c.getContext("2d");
  if (!ctx) return;
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  ctx.clearRect(0, 0, w, h);
  draw(ctx, paletteFor(c), dpr);
}

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

/** The compact rim gauge: bar to radius 1.05, the rim, warning (top) and alarm (bottom) notches, recent range, current radius. */
export const TileGauge = memo(function TileGauge(p: GaugeProps) {
  const ref = useRef<HTMLCanvasElement>(null);
  useLayoutEffect(() => {
    paint(ref.current, p.width, GAUGE_H, (ctx, pal) => {
      const w = p.width;
      const x = (r: number) => (Math.max(0, Math.min(GAUGE_MAX, r)) / GAUGE_MAX) * (w - 2) + 1;
      ctx.fillStyle = pal.line;
      ctx.fillRect(1, 7, w - 2, 4);
      if (p.recentMin != null && p.recentMax != null && Number.isFinite(p.recentMin) && Number.isFinite(p.recentMax)) {
        ctx.globalAlpha = 0.3;
        ctx.fillStyle = pal.muted;
        ctx.fillRect(x(p.recentMin), 5, Math.max(1, x(p.recentMax) - x(p.recentMin)), 8);
        ctx.globalAlpha = 1;
      }
      ctx.fillStyle = pal.ink;
      ctx.fillRect(x(1) - 1, 2, 2, GAUGE_H - 4);
      if (p.warn != null) {
        const xw = x(p.warn);
        ctx.fillStyle = pal.muted;
        ctx.beginPath();
        ctx.moveTo(xw - 3, 2);
        ctx.lineTo(xw + 3, 2);
        ctx.lineTo(xw, 6);
        ctx.fill();
      }
      if (p.alarm != null) {
        const xa = x(p.alarm);
        ctx.fillStyle = pal.ink;
        ctx.beginPath();
        ctx.moveTo(xa - 3.5, GAUGE_H - 1);
        ctx.lineTo(xa + 3.5, GAUGE_H - 1);
        ctx.lineTo(xa, GAUGE_H - 6);
        ctx.fill();
      }
      if (p.radius !== null) {
        const beyond = p.radius >= 1 || (p.alarm != null && p.radius >= p.alarm);
        ctx.fillStyle = p.stale ? pal.suppressed : beyond ? pal.urgent : pal.ink;
        ctx.fillRect(x(p.radius) - 1.5, 3, 3, GAUGE_H - 6);
      }
    });
  }, [p.width, p.radius, p.warn, p.alarm, p.recentMin, p.recentMax, p.stale]);
  const label = p.radius === null ? "no radius yet" : `spectral radius ${fmt(p.radius)}, rim distance ${fmt(1 - p.radius)}`;
  return <canvas ref={ref} role="img" aria-label={label} style={{ width: p.width, height: GAUGE_H, display: "block", flex: "none" }} />;
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
  const ref = useRef<HTMLCanvasElement>(null);
  useLayoutEffect(() => {
    paint(ref.current, w, h, (ctx, pal) => {
      const span = hi - lo || 1;
      const y = (v: number) => h - 2 - ((Math.max(lo, Math.min(hi, v)) - lo) / span) * (h - 4);
      if (level != null && level >= lo && level <= hi) {
        ctx.strokeStyle = pal.muted;
        ctx.lineWidth = 1;
        ctx.setLineDash([2, 3]);
        ctx.beginPath();
        ctx.moveTo(0, y(level));
        ctx.lineTo(w, y(level));
        ctx.stroke();
        ctx.setLineDash([]);
      }
      if (!spark) return;
      const arr = spark[which];
      const n = Math.min(count, SPARK_POINTS);
      const start = count - n;
      ctx.strokeStyle = pal.ink;
      ctx.lineWidth = 1.3;
      ctx.beginPath();
      let pen = false;
      for (let k = 0; k < n; k++) {
        const v = arr[(start + k) % SPARK_POINTS]!;
        if (!Number.isFinite(v)) {
          pen = false;
          continue;
        }
        const px = n <= 1 ? w : (k / (n - 1)) * w;
        if (pen) ctx.lineTo(px, y(v));
        else ctx.moveTo(px, y(v));
        pen = true;
      }
      ctx.stroke();
    });
  }, [spark, count, which, lo, hi, w, h, level]);
  return <canvas ref={ref} role="img" aria-label={label} style={{ width: w, height: h, display: "block", flex: "none" }} />;
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

const grids = new Map<string, HTMLCanvasElement>();
const GRID_CACHE_MAX = 500;

/** The grid of a small map (band, axes, loci, unit circle) at device pixels, drawn once per key. */
function gridFor(size: number, dpr: number, theme: string, pal: Palette, wr: number | null, ar: number | null): HTMLCanvasElement {
  const key = `${size}|${dpr}|${theme}|${wr}|${ar}`;
  let g = grids.get(key);
  if (g) return g;
  g = document.createElement("canvas");
  g.width = Math.round(size * dpr);
  g.height = Math.round(size * dpr);
  const ctx = g.getContext("2d")!;
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  const half = size / 2;
  const k = half / R;
  if (wr != null && ar != null && ar > wr) {
    ctx.globalAlpha = 0.08;
    ctx.fillStyle = pal.high;
    ctx.beginPath();
    ctx.arc(half, half, ar * k, 0, 2 * Math.PI);
    ctx.arc(half, half, wr * k, 0, 2 * Math.PI, true);
    ctx.fill("evenodd");
    ctx.globalAlpha = 1;
  }
  ctx.strokeStyle = pal.line;
  ctx.lineWidth = 1;
  ctx.beginPath();
  ctx.moveTo(half - R * k, half);
  ctx.lineTo(half + R * k, half);
  ctx.moveTo(half, half - R * k);
  ctx.lineTo(half, half + R * k);
  ctx.stroke();
  const l = lociOnce();
  const trace = (pts: Complex[]) => {
    for (const sign of [1, -1]) {
      pts.forEach((p, i) => {
        const x = half + p.re * k;
        const y = half - sign * p.im * k;
        if (i === 0) ctx.moveTo(x, y);
        else ctx.lineTo(x, y);
      });
    }
  };
  ctx.globalAlpha = 0.9;
  ctx.lineWidth = 0.8;
  ctx.beginPath();
  for (const pts of l.zeta) trace(pts);
  ctx.stroke();
  ctx.setLineDash([2, 2]);
  ctx.beginPath();
  for (const pts of l.wn) trace(pts);
  ctx.stroke();
  ctx.setLineDash([]);
  ctx.globalAlpha = 1;
  ctx.strokeStyle = pal.ink;
  ctx.lineWidth = 1.4;
  ctx.beginPath();
  ctx.arc(half, half, k, 0, 2 * Math.PI);
  ctx.stroke();
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
export const ZPlaneMini = memo(function ZPlaneMini(p: ZPlaneMiniProps) {
  const ref = useRef<HTMLCanvasElement>(null);
  // levels rounded to 1/500 (under a pixel here), so small moves of the dominant angle reuse the grid
  const wr = p.warnRadius == null ? null : Math.round(p.warnRadius * 500) / 500;
  const ar = p.alarmRadius == null ? null : Math.round(p.alarmRadius * 500) / 500;
  useLayoutEffect(() => {
    const c = ref.current;
    paint(c, p.size, p.size, (ctx, pal, dpr) => {
      const theme = (c!.closest("[data-theme]") as HTMLElement | null)?.getAttribute("data-theme") ?? "default";
      ctx.drawImage(gridFor(p.size, dpr, theme, pal, wr, ar), 0, 0, p.size, p.size);
      const half = p.size / 2;
      const k = half / R;
      const arm = 3.5;
      const ink = p.stale ? pal.suppressed : pal.ink;
      ctx.strokeStyle = ink;
      ctx.lineWidth = 1;
      ctx.beginPath();
      for (const z of p.dataPoles) {
        const x = half + z.re * k;
        const y = half - z.im * k;
        ctx.moveTo(x - arm, y);
        ctx.lineTo(x + arm, y);
        ctx.moveTo(x, y - arm);
        ctx.lineTo(x, y + arm);
      }
      ctx.stroke();
      ctx.lineWidth = 2;
      ctx.lineCap = "round";
      for (const z of p.modelPoles) {
        const x = half + z.re * k;
        const y = half - z.im * k;
        ctx.strokeStyle = Math.hypot(z.re, z.im) >= 1 && !p.stale ? pal.urgent : ink;
        ctx.beginPath();
        ctx.moveTo(x - arm, y - arm);
        ctx.lineTo(x + arm, y + arm);
        ctx.moveTo(x - arm, y + arm);
        ctx.lineTo(x + arm, y - arm);
        ctx.stroke();
      }
    });
  }, [p.modelPoles, p.dataPoles, p.size, p.stale, wr, ar]);
  const fmtZ = (z: PoleBrief) => `${z.re.toFixed(3)}${z.im >= 0 ? "+" : "-"}${Math.abs(z.im).toFixed(3)}j`;
  const label = `z-plane: ${p.modelPoles.length} model-based pole(s) ${p.modelPoles.map(fmtZ).join(", ")}; ${p.dataPoles.length} ${p.dataPolesKind === "closed-loop" ? "data-only" : "disturbance-response"} pole(s)`;
  return <canvas ref={ref} role="img" aria-label={label} style={{ width: p.size, height: p.size, display: "block", flex: "none" }} />;
});
