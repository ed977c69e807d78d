/**
 * Refined IV in the drift fit (issue #10, item 3; docs/domain.md §7, "A refined IV with the
 * system's denominator"), measured in one run:
 *   npm run bench:drift-riv -- [seed base] [runs] [order]   (defaults 9100, 40, 12)
 * Records the tracker's drift-fit samples in the harness's ramp, gain-creep and no-drift runs
 * (tests/control/drift-shape.ts) and prints, per rule, the share within +-15 % of the true
 * remaining time at half way, interval coverage, median error and robust sd
 * (./drift-summary.ts): the tracker replayed, its batch refit (the tracker's final noise model
 * over the window), and tests/control/drift-riv.ts's variants: the AR(order) noise model refitted
 * to the batch residuals (no 1/A), 1/A alone (simplified RIV), and 1/A with the AR(order) (RIV),
 * each after 3 estimate-filter rounds. Prints; asserts nothing.
 */
import { recordDriftStreams, replayTracker, type Forecast } from "../control/drift-shape";
import { polyDriftFit, rivDriftFit, type RivOptions } from "../control/drift-riv";
import { gainDrift, tangent } from "../control/drift-shape-rules";
import { summary } from "./drift-summary";

const [seed = 9100, runs = 40, order = 12] = process.argv.slice(2).map(Number);
if (![seed, runs, order].every((v) => Number.isInteger(v) && v >= 0) || runs < 1) {
  throw new Error(`usage: node --import tsx tests/bench/drift-riv.bench.ts [seed base] [runs >= 1] [AR order] (got ${process.argv.slice(2).join(" ") || "nothing"})`);
}
const VARIANTS: Record<string, RivOptions> = {
  [`AR(${order}) refitted, no 1/A`]: { order, aFilter: false, iterations: 3 },
  "1/A alone (SRIV)": { order: 0, aFilter: true, iterations: 3 },
  [`1/A + AR(${order}) (RIV)`]: { order, aFilter: true, iterations: 3 },
};

for (const kind of ["linear-radius", "gain-creep", "no-drift"] as const) {
  const streams = recordDriftStreams(kind, runs, seed);
  const by: Record<string, { f: Forecast; truth: number | null }[]> = {};
  const add = (k: string, f: Forecast, truth: number | null) => (by[k] ??= []).push({ f, truth });
  for (const s of streams) {
    const { forecast, noiseA } = replayTracker(s);
    add("tracker (replayed)", forecast, s.truth);
    const f1 = polyDriftFit(s, 1, noiseA);
    const span = (f: typeof f1) => (f && f.tLast - f.tFirst >= 10 * s.o.memoryS ? f : null);
    const start = span(f1);
    add("batch refit", start ? tangent(gainDrift(start, s.o.na), s) : null, s.truth);
    for (const [k, o] of Object.entries(VARIANTS)) add(k, start ? tangent(span(rivDriftFit(s, start, o)), s) : null, s.truth);
  }
  console.log(`${kind}, seed base ${seed}, ${streams.length} runs`);
  for (const [k, list] of Object.entries(by)) console.log(`  ${k.padEnd(28)} ${summary(list)}`);
}
