/**
 * Is the drift's shape in one window? (issue #10, item 3; docs/domain.md §7, "The drift's
 * shape"), measured in one run:
 *   npm run bench:drift-shape -- [seed base] [runs]   (defaults 9100, 40)
 * Records the tracker's drift-fit samples in the harness's ramp, gain-creep and no-drift runs
 * (tests/control/drift-shape.ts), then prints for each forecast rule of
 * tests/control/drift-shape-rules.ts the share within +-15 % of the true remaining time at half
 * way (Wilson 95 % interval), the interval coverage, the median error and the robust sd
 * (interquartile range / 1.349), and the z-statistic of the gain's curvature. Prints; asserts nothing.
 */
import { recordDriftStreams, type Forecast } from "../control/drift-shape";
import { shapeForecasts } from "../control/drift-shape-rules";
import { half, pct, summary } from "./drift-summary";

const [seed = 9100, runs = 40] = process.argv.slice(2).map(Number);
if (!Number.isInteger(seed) || seed < 0 || !Number.isInteger(runs) || runs < 1) {
  throw new Error(`usage: npm run bench:drift-shape -- [seed base: an integer >= 0] [runs: an integer >= 1] (got ${process.argv.slice(2).join(" ") || "nothing"})`);
}
for (const kind of ["linear-radius", "gain-creep", "no-drift"] as const) {
  const streams = recordDriftStreams(kind, runs, seed);
  const by: Record<string, { f: Forecast; truth: number | null }[]> = {};
  const z: number[] = [];
  let tracker = 0;
  const gaps: number[] = [];
  for (const s of streams) {
    const r = shapeForecasts(s);
    if (s.truth !== null && Number.isFinite(r.linearLessTracker)) gaps.push(Math.abs(r.linearLessTracker) / (s.truth - half));
    if (r.trackerAgrees) tracker++;
    if (Number.isFinite(r.curvatureZ)) z.push(r.curvatureZ);
    for (const [k, f] of Object.entries(r.rules)) (by[k] ??= []).push({ f, truth: s.truth });
  }
  const m = z.reduce((a, b) => a + b, 0) / z.length;
  const sd = Math.sqrt(z.reduce((a, b) => a + (b - m) ** 2, 0) / (z.length - 1));
  console.log(`${kind}, seed base ${seed}, ${streams.length} runs: replay = tracker in ${tracker}, batch linear - replay median ${gaps.length ? pct(gaps.sort((a, b) => a - b)[Math.floor(gaps.length / 2)]!) : "-"} % of the remaining time; curvature z of the gain: mean ${m.toFixed(2)}, sd ${sd.toFixed(2)}, |z| > 2.576 in ${z.filter((v) => Math.abs(v) > 2.576).length} of ${z.length}`);
  for (const [k, list] of Object.entries(by)) console.log(`  ${k.padEnd(24)} ${summary(list)}`);
}
