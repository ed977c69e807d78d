"use client";
/**
 * Measured vs simulated PV of a step test, with the MV below on its own axis (uPlot, loaded in an
 * effect because it touches `window`). x is seconds from the start of the log, not a clock time.
 */
import { useEffect, useRef } from "react";
import type uPlot from "uplot";
import "uplot/dist/uPlot.min.css";

function cssVar(name: string, fallback: string): string {
  const v = getComputedStyle(document.documentElement).getPropertyValue(name).trim();
  return v || fallback;
}

export interface StepTestChartProps {
  t: number[];
  pvMeasured: number[];
  pvSimulated: number[];
  pvSummary: number[] | null;
  mv: number[];
  sp: number[] | null;
  units: string;
  mvUnits: string;
  ariaLabel: string;
}

export function StepTestChart(p: StepTestChartProps) {
  const host = useRef<HTMLDivElement>(null);
  useEffect(() => {
    let plot: uPlot | null = null;
    let ro: ResizeObserver | null = null;
    let disposed = false;
    void import("uplot").then(({ default: UPlot }) => {
      const el = host.current;
      if (disposed || !el) return;
      const ink = cssVar("--rg-muted", "#a9b2bc");
      const grid = cssVar("--rg-line", "#414a55");
      const axis = (scale: string, label: string, side: 1 | 3 = 3): uPlot.Axis => ({ scale, label, side, stroke: ink, grid: { stroke: grid, width: 1 }, ticks: { stroke: grid } });
      const points = { show: false };
      const series: uPlot.Series[] = [
        {},
        { label: `PV measured (${p.units})`, stroke: cssVar("--rg-ink", "#e4e8ec"), width: 1.4, scale: "pv", points },
        { label: `PV, ARX model (${p.units})`, stroke: cssVar("--rg-accent", "#6cb4ee"), width: 1.6, dash: [6, 3], scale: "pv", points },
        { label: `MV (${p.mvUnits})`, stroke: cssVar("--rg-low", "#b9a0f5"), width: 1, scale: "mv", points },
      ];
      const data: uPlot.AlignedData = [p.t, p.pvMeasured, p.pvSimulated, p.mv];
      if (p.pvSummary) {
        series.push({ label: `PV, summary model (${p.units})`, stroke: cssVar("--rg-ok", "#9fc3a8"), width: 1.2, dash: [2, 3], scale: "pv", points });
        (data as unknown as number[][]).push(p.pvSummary);
      }
      if (p.sp) {
        series.push({ label: `SP (${p.units})`, stroke: ink, width: 1, dash: [8, 4], scale: "pv", points });
        (data as unknown as number[][]).push(p.sp);
      }
      plot = new UPlot(
        {
          width: el.clientWidth || 800,
          height: 300,
          scales: { x: { time: false }, pv: { auto: true }, mv: { auto: true } },
          axes: [{ stroke: ink, grid: { stroke: grid, width: 1 }, ticks: { stroke: grid }, label: "seconds from start" }, axis("pv", p.units), axis("mv", p.mvUnits, 1)],
          series,
          cursor: { drag: { x: true, y: false } },
        },
        data,
        el,
      );
      ro = new ResizeObserver(() => plot?.setSize({ width: el.clientWidth || 800, height: 300 }));
      ro.observe(el);
    });
    return () => {
      disposed = true;
      ro?.disconnect();
      plot?.destroy();
    };
  }, [p.t, p.pvMeasured, p.pvSimulated, p.pvSummary, p.mv, p.sp, p.units, p.mvUnits]);
  return <div ref={host} role="img" aria-label={p.ariaLabel} className="w-full" data-testid="step-test-chart" />;
}
