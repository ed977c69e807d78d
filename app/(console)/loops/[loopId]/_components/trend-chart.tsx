"use client";
/**
 * A uPlot trend (loaded in an effect: uPlot touches `window`). Columnar data aligned on x
 * (seconds), `null` for gaps; the chart is created once per series layout and then only fed
 * with setData, so a live update costs one redraw. Axis strokes are set for the dark theme.
 * Horizontal levels (thresholds) are drawn by a draw hook, not as data series.
 */
import { useEffect, useLayoutEffect, useRef } from "react";
import type uPlot from "uplot";
import "uplot/dist/uPlot.min.css";
import { thinAligned } from "@/lib/client/history";

// Start fetching the chart library as soon as a page with trends loads, not when the first
// chart mounts (the history request and the chunk then travel together).
if (typeof window !== "undefined") void import("uplot");

export interface TrendSeries {
  label: string;
  stroke: string;
  width?: number;
  dash?: number[];
  scale?: string;
  /** Draw points only (for sparse snapshots). */
  points?: boolean;
}

export interface TrendLevel {
  value: number;
  label: string;
  stroke: string;
  dash?: number[];
  scale?: string;
}

export interface TrendBand {
  /** x range (seconds) and y range on `scale`. */
  x0: number;
  x1: number;
  y0: number;
  y1: number;
  fill: string;
  scale?: string;
}

export interface TrendChartProps {
  data: uPlot.AlignedData;
  series: TrendSeries[];
  /** Fixed y ranges per scale, e.g. { y: [0, 100] }. */
  scales: Record<string, [number, number]>;
  /** Which scales get an axis, and on which side (1 = right). */
  axes?: { scale: string; label: string; side?: 1 | 3 }[];
  levels?: TrendLevel[];
  bands?: TrendBand[];
  height?: number;
  syncKey?: string;
  /** Fixed x range in seconds; otherwise the data's. */
  xRange?: [number, number];
  onCursor?: (t: number | null) => void;
  ariaLabel: string;
  /** Called after the first complete draw with the time it took (ms), for the benchmark. */
  onFirstDraw?: (ms: number) => void;
}

function cssVar(name: string, fallback: string): string {
  if (typeof window === "undefined") return fallback;
  const v = getComputedStyle(document.documentElement).getPropertyValue(name).trim();
  return v || fallback;
}

/** Canvas cannot read CSS variables: resolve `var(--x)` to the theme's current value. */
function resolveColor(c: string): string {
  const m = /^var\((--[^)]+)\)$/.exec(c.trim());
  return m ? cssVar(m[1]!, "#888888") : c;
}

/**
 * Record on the host element how many points were drawn and when the frame that shows them
 * starts (performance.now()), for the UI benchmark and tests; costs one attribute write.
 */
/**
 * The chart never gets more points than pixel columns: long raw data is thinned to min/max per
 * column (lib/client/history thinAligned) before uPlot sees it.
 */
function chartData(el: HTMLElement, data: uPlot.AlignedData): uPlot.AlignedData {
  const px = Math.max(200, Math.ceil((el.clientWidth || 600) * Math.min(2, window.devicePixelRatio || 1)));
  return thinAligned(data as unknown as ArrayLike<number | null>[], px).data as unknown as uPlot.AlignedData;
}

function extraKey(p: TrendChartProps): string {
  return JSON.stringify([p.levels ?? null, p.bands ?? null, p.xRange ?? null, p.scales]);
}

function markDrawn(el: HTMLElement, data: uPlot.AlignedData): void {
  const n = data[0]?.length ?? 0;
  requestAnimationFrame(() => {
    el.dataset.points = String(n);
    el.dataset.drawnAt = performance.now().toFixed(1);
  });
}

export function TrendChart(props: TrendChartProps) {
  const host = useRef<HTMLDivElement>(null);
  const plot = useRef<uPlot | null>(null);
  const latest = useRef(props);
  useLayoutEffect(() => {
    latest.current = props;
  });
  // The chart is rebuilt only when its layout changes; scale ranges are read through `latest`
  // on every draw, so a new range (e.g. the radius axis once the history arrives) is a redraw.
  const layoutKey = JSON.stringify([props.series, props.axes, Object.keys(props.scales), props.height, props.syncKey]);
  // What was last handed to the chart: column references and the small props drawn by hooks.
  const fed = useRef<{ cols: readonly unknown[]; extra: string } | null>(null);

  useEffect(() => {
    let disposed = false;
    let ro: ResizeObserver | null = null;
    const t0 = performance.now();
    void import("uplot").then(({ default: UPlot }) => {
      const el = host.current;
      if (disposed || !el) return;
      const p = latest.current;
      const ink = cssVar("--rg-muted", "#a9b2bc");
      const grid = cssVar("--rg-line", "#414a55");
      const font = "11px ui-monospace, monospace";
      const scales: uPlot.Scales = { x: { time: true, ...(p.xRange ? { range: () => latest.current.xRange ?? [0, 1] } : {}) } };
      for (const [k, r] of Object.entries(p.scales)) scales[k] = { auto: false, range: () => latest.current.scales[k] ?? r };
      const axes: uPlot.Axis[] = [
        { stroke: ink, grid: { stroke: grid, width: 1 }, ticks: { stroke: grid, width: 1 }, font },
        ...(p.axes ?? [{ scale: "y", label: "" }]).map(
          (a): uPlot.Axis => ({ scale: a.scale, label: a.label, side: a.side ?? 3, stroke: ink, grid: { stroke: grid, width: 1, show: a.side !== 1 }, ticks: { stroke: grid, width: 1 }, font, labelFont: font, size: 56 }),
        ),
      ];
      const opts: uPlot.Options = {
        width: el.clientWidth || 600,
        height: p.height ?? 220,
        scales,
        axes,
        legend: { show: true, live: true },
        cursor: { sync: p.syncKey ? { key: p.syncKey } : undefined, drag: { x: false, y: false } },
        series: [
          { label: "time" },
          ...p.series.map(
            (s): uPlot.Series => ({
              label: s.label,
              stroke: resolveColor(s.stroke),
              width: s.width ?? 1.5,
              dash: s.dash,
              scale: s.scale ?? "y",
              spanGaps: false,
              points: s.points ? { show: true, size: 4, stroke: resolveColor(s.stroke), fill: resolveColor(s.stroke) } : { show: false },
              ...(s.points ? { paths: () => null } : {}),
            }),
          ),
        ],
        hooks: {
          draw: [
            (u) => {
              const q = latest.current;
              const ctx = u.ctx;
              ctx.save();
              for (const b of q.bands ?? []) {
                const sc = b.scale ?? "y";
                const x0 = u.valToPos(b.x0, "x", true);
                const x1 = u.valToPos(b.x1, "x", true);
                const y0 = u.valToPos(b.y0, sc, true);
                const y1 = u.valToPos(b.y1, sc, true);
                ctx.fillStyle = resolveColor(b.fill);
                ctx.fillRect(Math.min(x0, x1), Math.min(y0, y1), Math.max(1, Math.abs(x1 - x0)), Math.max(2, Math.abs(y1 - y0)));
              }
              (q.levels ?? []).forEach((l, li) => {
                const y = u.valToPos(l.value, l.scale ?? "y", true);
                if (!Number.isFinite(y)) return;
                ctx.strokeStyle = resolveColor(l.stroke);
                ctx.lineWidth = 1 * devicePixelRatio;
                ctx.setLineDash((l.dash ?? [6, 4]).map((d) => d * devicePixelRatio));
                ctx.beginPath();
                ctx.moveTo(u.bbox.left, y);
                ctx.lineTo(u.bbox.left + u.bbox.width, y);
                ctx.stroke();
                ctx.setLineDash([]);
                ctx.fillStyle = resolveColor(l.stroke);
                ctx.font = `${10 * devicePixelRatio}px ui-monospace, monospace`;
                // stagger the labels along the line so close levels stay readable
                const lx = u.bbox.left + (4 + li * 130) * devicePixelRatio;
                ctx.fillText(l.label, Math.min(lx, u.bbox.left + u.bbox.width - 120 * devicePixelRatio), y - 3 * devicePixelRatio);
              });
              ctx.restore();
            },
          ],
          setCursor: [
            (u) => {
              const cb = latest.current.onCursor;
              if (!cb) return;
              const idx = u.cursor.idx;
              cb(idx == null ? null : (u.data[0][idx] ?? null));
            },
          ],
        },
      };
      const d = chartData(el, p.data);
      plot.current = new UPlot(opts, d, el);
      fed.current = { cols: [...p.data], extra: extraKey(p) };
      markDrawn(el, d);
      p.onFirstDraw?.(performance.now() - t0);
      ro = new ResizeObserver(() => {
        if (plot.current && el.clientWidth > 0) plot.current.setSize({ width: el.clientWidth, height: latest.current.height ?? 220 });
      });
      ro.observe(el);
    });
    return () => {
      disposed = true;
      ro?.disconnect();
      plot.current?.destroy();
      plot.current = null;
    };
  }, [layoutKey]);

  useEffect(() => {
    const u = plot.current;
    if (!u) return;
    // The page re-renders every second and on every live state with new wrapper arrays: feed
    // the chart (thin and redraw) only when a column or what the hooks draw really changed.
    const extra = extraKey(props);
    const last = fed.current;
    if (last && last.extra === extra && last.cols.length === props.data.length && props.data.every((c, i) => c === last.cols[i])) return;
    fed.current = { cols: [...props.data], extra };
    const el = host.current;
    const d = el ? chartData(el, props.data) : props.data;
    u.setData(d, true);
    if (el) markDrawn(el, d);
  });

  return <div ref={host} role="img" aria-label={props.ariaLabel} className="w-full" data-testid="trend-chart" />;
}
