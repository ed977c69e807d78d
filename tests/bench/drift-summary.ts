/**
 * One row of the drift-fit rule comparisons (tests/bench/drift-shape.bench.ts,
 * drift-riv.bench.ts): the share within +-15 % of the true remaining time at half way (Wilson 95 %
 * interval), the interval coverage, the median error and the robust sd (interquartile range /
 * 1.349); for the no-drift runs, the share without a forecast.
 */
import type { Forecast } from "../control/drift-shape";
import { DRIFT_S } from "../control/forecast-tracker-mc";
import { wilson } from "./coverage-table";

export const half = DRIFT_S / 2;
export const pct = (x: number) => (100 * x).toFixed(1);

export function summary(list: { f: Forecast; truth: number | null }[]): string {
  const n = list.length;
  const fc = list.filter((r) => r.f);
  if (list[0]?.truth === null) {
    const quiet = (n - fc.length) / n;
    return `no forecast ${pct(quiet)} % [${wilson(quiet, n).map(pct).join("-")}]`;
  }
  const err = fc.map((r) => (r.f!.at - r.truth!) / (r.truth! - half)).sort((a, b) => a - b);
  const within = err.filter((e) => Math.abs(e) <= 0.15).length / n;
  const withIv = fc.filter((r) => Number.isFinite(r.f!.low));
  const cov = withIv.filter((r) => r.f!.low <= r.truth! && r.truth! <= r.f!.high).length / withIv.length;
  const q = (p: number) => err[Math.floor(p * (err.length - 1))]!;
  return `within +-15 % ${pct(within)} % [${wilson(within, n).map(pct).join("-")}], coverage ${withIv.length ? pct(cov) + " %" : "-"}, median ${pct(q(0.5))} %, robust sd ${pct((q(0.75) - q(0.25)) / 1.349)} %, forecasts ${fc.length}/${n}`;
}

