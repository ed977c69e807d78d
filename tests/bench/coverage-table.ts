/**
 * Coverage table of `npm run bench`: interval coverage and related shares from seeded Monte Carlo
 * runs (statistics, not single values), each beside its target band. Prints; asserts nothing.
 * Runs: see the "runs" column; everything is seeded, so a rerun prints the same figures.
 */
import { arxRadiusCoverage, forecastDrift, ivOpenLoop } from "../control/coverage-mc";
import { forecastThroughTracker } from "../control/forecast-tracker-mc";
import { COMPLEX_PAIR, REAL_POLE, trackerCoverage } from "../control/tracker-coverage";

/** Wilson score interval of a share p out of n at 95 % (Wilson, J. Amer. Statist. Assoc. 22, 1927). */
export function wilson(p: number, n: number): [number, number] {
  if (!(n > 0) || !Number.isFinite(p)) return [NaN, NaN];
  const z2 = 1.959964 ** 2;
  const c = (p + z2 / (2 * n)) / (1 + z2 / n);
  const h = (Math.sqrt(z2) / (1 + z2 / n)) * Math.sqrt((p * (1 - p)) / n + z2 / (4 * n * n));
  return [c - h, c + h];
}

interface Row {
  what: string;
  runs: number;
  value: number;
  lo: number;
  hi: number;
}

export function printCoverageTable(): void {
  const t0 = performance.now();
  const rows: Row[] = [];
  const pct = (x: number) => `${(100 * x).toFixed(1)} %`;
  rows.push({ what: "pole radius, ArxEstimator defaults (lambda 0.995, directional), 500 samples", runs: 1000, value: arxRadiusCoverage(1000, 500, 4743), lo: 0.93, hi: 0.97 });
  rows.push({ what: "pole radius, ArxEstimator defaults, steady state (3,000 samples)", runs: 600, value: arxRadiusCoverage(600, 3000, 7244), lo: 0.93, hi: 0.97 });
  for (const p of [REAL_POLE, COMPLEX_PAIR]) {
    for (const n of [500, 2000]) {
      const c = trackerCoverage(p, 150, n, 100);
      const { configured: full, reduced } = c.byOrder;
      const split = `configured order ${full.covered}/${full.counted}, a pole fewer ${reduced.covered}/${reduced.counted}`;
      rows.push({ what: `tracker closed loop, ${p.name}, ${n} samples (runs counted: tracking; covered: ${split})`, runs: c.counted, value: c.coverage, lo: 0.93, hi: 0.97 });
    }
  }
  // 1,000 runs: at 300 the binomial sd (1.3 %) was two thirds of the band's half width
  const iv = ivOpenLoop(1000, 500, 0.3, 1000);
  rows.push({ what: `IV in manual (white MV), 500 samples; radius error p95 ${iv.p95.toFixed(3)}, worst ${iv.worst.toFixed(3)}`, runs: 1000, value: iv.coverage, lo: 0.93, hi: 0.97 });
  const f = forecastDrift(300, 0.001, 5000);
  rows.push({ what: "rim forecast interval, drift 0.90 -> 1.0 over 10 h, at half way (synthetic radius series)", runs: f.forecasts, value: f.coverage, lo: 0.9, hi: 0.97 });
  rows.push({ what: "rim forecast within +-15 % at half way", runs: 300, value: f.within15, lo: 0.8, hi: 1 });
  rows.push({ what: "no forecast on a run without drift", runs: 300, value: f.quiet, lo: 0.95, hi: 1 });
  // the same through the tracker in closed loop (tests/control/forecast-tracker-mc.ts), 5 s samples; the
  // tracker forecasts from its plant parameters' drift, and the same runs' radius-history trend
  // (the forecast before it) is printed beside it (docs/domain.md §7)
  const signed = (x: number) => (Number.isFinite(x) ? `${x >= 0 ? "+" : ""}${(100 * x).toFixed(1)} %` : "n/a");
  for (const [kind, label] of [["linear-radius", "radius 0.90 -> 1.0 linear in 10 h"], ["gain-creep", "simulator gain creep to the rim in 10 h"]] as const) {
    const m = forecastThroughTracker(kind, 80, 9100);
    for (const [x, src] of [[m, "parameter drift"], [m.history, "radius history alone (before)"]] as const) {
      rows.push({ what: `tracker rim forecast interval, ${label}, half way, ${src} (runs: with a forecast)`, runs: x.forecasts, value: x.coverage, lo: 0.9, hi: 0.97 });
      rows.push({ what: `  same, within +-15 % (error of remaining time: median ${signed(x.medianError)}, sd ${pct(x.errorSd)}; centred on the median ${pct(x.within15Centred)})`, runs: x.runs, value: x.within15, lo: 0.8, hi: 1 });
    }
  }
  const q = forecastThroughTracker("no-drift", 80, 9100);
  rows.push({ what: "tracker: no rim forecast on a run without drift (true radius 0.90), at 5 h", runs: q.runs, value: q.quiet, lo: 0.95, hi: 1 });
  rows.push({ what: "  same, radius history alone (before)", runs: q.runs, value: q.history.quiet, lo: 0.95, hi: 1 });
  console.log("");
  console.log("coverage table (seeded Monte Carlo; 95 % intervals unless stated)");
  console.log(`${"quantity".padEnd(100)} ${"runs".padStart(5)}  ${"value".padStart(8)}  ${"Wilson 95 %".padEnd(14)}  target band   verdict`);
  for (const r of rows) {
    const inside = r.value >= r.lo && r.value <= r.hi;
    const [wl, wh] = wilson(r.value, r.runs);
    console.log(`${r.what.padEnd(100)} ${String(r.runs).padStart(5)}  ${pct(r.value).padStart(8)}  ${`${(100 * wl).toFixed(1)}-${(100 * wh).toFixed(1)} %`.padEnd(14)}  ${`${(100 * r.lo).toFixed(0)}-${(100 * r.hi).toFixed(0)} %`.padEnd(12)}  ${inside ? "inside" : "OUTSIDE"}`);
  }
  console.log(`coverage table took ${((performance.now() - t0) / 1000).toFixed(1)} s`);
}
