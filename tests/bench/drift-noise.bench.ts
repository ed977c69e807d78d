/**
 * The rim forecast through the tracker with and without the drift fit's estimated noise model
 * (lib/control/drift-noise.ts; issue #10, item 3; docs/domain.md §7), measured in one run:
 *   node --import tsx tests/bench/drift-noise.bench.ts [order] [memories] [seed base] [runs]
 * (defaults 12, 8, 9100, 80): for noise order 0 (none) and `order` (12 and 8 are the tracker's
 * default, DEFAULT_DRIFT_NOISE in server/tracking/drift-source.ts), fitted to the
 * residuals of the last `memories` estimator memories, the harness's ramp, gain creep and no-drift
 * runs (tests/control/forecast-tracker-mc.ts) with Wilson 95 % intervals, then the tracker's cost
 * per sample with that noise model (tests/bench/tracker-drift-cost.ts). Prints; asserts nothing.
 * Order 0: the tracker without a noise model alone, e.g. `npm run bench:drift-noise -- 0 0 40000 80`;
 * `-- 12 8 40000 80` adds the default tracker's rows (the coverage table's) on another seed base.
 */
import { forecastThroughTracker } from "../control/forecast-tracker-mc";
import { wilson } from "./coverage-table";
import { printDriftCost } from "./tracker-drift-cost";
import { NO_DRIFT_NOISE } from "@/server/tracking/drift-source";

const [order = 12, memories = 8, seed = 9100, runs = 80] = process.argv.slice(2).map(Number);
const pct = (x: number) => (100 * x).toFixed(1);
const band = (p: number, n: number) => `[${wilson(p, n).map(pct).join("-")}]`;
for (const o of order > 0 ? [0, order] : [0]) {
  for (const kind of ["linear-radius", "gain-creep", "no-drift"] as const) {
    const m = forecastThroughTracker(kind, runs, seed, undefined, o > 0 ? { order: o, memories } : NO_DRIFT_NOISE);
    const head = `noise order ${o}${o ? `, ${memories} memories` : ""}, seed base ${seed}, ${kind}:`;
    if (kind === "no-drift") console.log(`${head} no forecast ${pct(m.quiet)} % ${band(m.quiet, m.runs)}`);
    else console.log(`${head} within +-15 % ${pct(m.within15)} % ${band(m.within15, m.runs)}, interval coverage ${pct(m.coverage)} % ${band(m.coverage, m.forecasts)} of ${m.forecasts}, median ${pct(m.medianError)} %, sd ${pct(m.errorSd)} %`);
  }
}
printDriftCost(order > 0 ? { order, memories } : NO_DRIFT_NOISE);
