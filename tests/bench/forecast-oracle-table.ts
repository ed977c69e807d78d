/**
 * The rim forecast against its oracles (issue #10, item 3; docs/domain.md §7), printed by
 * `npm run bench:control` after the coverage table: on the harness's seeded runs (the same loop,
 * excitation and noise as the tracker rows, seed bases 9100 and 40000, 80 runs each), the share
 * within ±15 % of the true remaining time at half way through a 10 h drift of
 *  - the oracle that knows the plant up to its gain, the load model and the drift's shape
 *    (tests/control/forecast-oracle.ts), and its Cramér–Rao bound's Gaussian share;
 *  - the oracle with the tracker's own ARX model and crossing but the true noise filter
 *    (tests/control/forecast-oracle-arx.ts), and the same fit without a noise model.
 * The tracker's own figures on the same runs are the coverage table's rows. Prints; asserts nothing.
 */
import { oracleMc } from "../control/forecast-oracle";
import { arxOracleRun } from "../control/forecast-oracle-arx";
import { wilson } from "./coverage-table";

const RUNS = 80;

/** Median and robust sd (interquartile range / 1.349) of the finite errors; share within ±15 %. */
function spread(errors: number[]): { median: number; robustSd: number; within: number } {
  const s = errors.filter(Number.isFinite).sort((a, b) => a - b);
  const q = (p: number) => s[Math.floor(p * (s.length - 1))] ?? NaN;
  return { median: q(0.5), robustSd: (q(0.75) - q(0.25)) / 1.349, within: errors.filter((e) => Math.abs(e) <= 0.15).length / errors.length };
}

export function printOracleTable(): void {
  const t0 = performance.now();
  const pct = (x: number) => `${(100 * x).toFixed(1)} %`;
  const share = (x: number) => {
    const [lo, hi] = wilson(x, RUNS);
    return `${pct(x)} [${(100 * lo).toFixed(0)}, ${(100 * hi).toFixed(0)}]`;
  };
  console.log("");
  console.log(`rim forecast oracles: within +-15 % of the true remaining time at half way, 10 h drift, ${RUNS} runs per row (Wilson 95 %)`);
  console.log(`${"scenario, seed base".padEnd(28)}${"gain oracle".padEnd(22)}${"its CRB".padEnd(10)}${"sd / CRB sd".padEnd(16)}${"ARX oracle (GLS)".padEnd(22)}${"median, robust sd".padEnd(20)}ARX, no noise model`);
  for (const seed of [9100, 40000]) {
    for (const kind of ["linear-radius", "gain-creep"] as const) {
      const o = oracleMc(kind, RUNS, seed);
      const gls = spread(Array.from({ length: RUNS }, (_, r) => arxOracleRun(kind, seed + r, true).error));
      const ols = spread(Array.from({ length: RUNS }, (_, r) => arxOracleRun(kind, seed + r, false).error));
      console.log(
        `${`${kind}, ${seed}`.padEnd(28)}${share(o.within15).padEnd(22)}${pct(o.boundWithin15).padEnd(10)}${`${pct(o.errorSd)} / ${pct(o.boundSd)}`.padEnd(16)}` +
          `${share(gls.within).padEnd(22)}${`${pct(gls.median)}, ${pct(gls.robustSd)}`.padEnd(20)}${share(ols.within)}`,
      );
    }
  }
  console.log(`oracle table took ${((performance.now() - t0) / 1000).toFixed(1)} s`);
}
