/**
 * The instrumental-variable estimator in closed loop (lib/control/riv.ts, auxiliary-model
 * instruments with the loop's PI), on data prefiltered as a tracker does (L(q) = (1 - q^-1)/(1 -
 * 0.9 q^-1), server/tracking/conditioning.ts): Monte Carlo of the 95 % interval of the dominant
 * closed-loop radius (delta method on the estimator's covariance, lib/control/confidence.ts).
 * Checked against the nominal 95 % level of the interval and against the spread of the estimates
 * themselves. The truth is the dominant root of the true closed-loop polynomial, computed by
 * numpy.roots (Debian python3-numpy) from its coefficients.
 * Plants: the real dominant pole and the complex pair of tests/control/tracker-coverage.ts. The
 * real pole's second-order estimate wanders along an ill-determined direction, which an earlier
 * covariance (HAC scores at the a-priori residuals of the moving estimate) turned into intervals
 * about 140x too wide (median sd 0.97 against a spread of 0.0069; every interval covered). The
 * next one (HAC scores at the estimate, na lags) left heavy tails: on the prefiltered data its
 * score sum was often indefinite and intervals far too narrow in those runs (errors to 6.7 sd).
 */
import { execFileSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { closedLoopCoefficientCovariance, poleConfidence } from "@/lib/control/confidence";
import { closedLoopPolynomial, discretePid } from "@/lib/control/closed-loop";
import { InstrumentalArxEstimator } from "@/lib/control/riv";
import { prefilterNoiseLags } from "@/lib/control/riv-covariance";
import { PREFILTER_POLE } from "@/server/tracking/conditioning";
import { closedLoopSamples, COMPLEX_PAIR, REAL_POLE, type CoveragePlant } from "./tracker-coverage";
import { PYTHON } from "../helpers/python";


/** One seeded closed-loop run (tests/control/tracker-coverage.ts), prefiltered; the estimator after it. */
function run(P: CoveragePlant, samples: number, seed: number): InstrumentalArxEstimator {
  const ctrl = discretePid({ kp: P.kp, ti: P.ti, T: 1, action: "reverse" });
  // the lags of the prefiltered equation error, as the tracker sets them (server/tracking/estimation.ts)
  const est = new InstrumentalArxEstimator({ na: 2, nb: 2, nk: 1, controller: ctrl, noiseLags: 2 + prefilterNoiseLags(PREFILTER_POLE) });
  let prev: number[] | null = null;
  const f = [0, 0, 0];
  for (const { sp, pv, u } of closedLoopSamples(P, samples, seed)) {
    const now = [u, pv, sp];
    if (prev) {
      for (let i = 0; i < 3; i++) f[i] = PREFILTER_POLE * f[i]! + now[i]! - prev[i]!;
      est.push(f[0]!, f[1]!, f[2]!);
    }
    prev = now;
  }
  return est;
}

describe("InstrumentalArxEstimator in closed loop: the 95 % interval of the closed-loop radius", () => {
  it.each([REAL_POLE, COMPLEX_PAIR])("$name: covers the true radius near the nominal 95 % over 80 seeded runs of 2,000 samples, its median sd within 2x of the estimates' spread", (P) => {
    const ctrl = discretePid({ kp: P.kp, ti: P.ti, T: 1, action: "reverse" });
    const char = closedLoopPolynomial(P.plant, ctrl);
    const out = execFileSync(PYTHON, ["-c", `import numpy, sys; print(max(abs(numpy.roots([${char.join(",")}]))))`]).toString();
    const truth = Number(out);
    expect(truth).toBeGreaterThan(0.9);
    expect(truth).toBeLessThan(1);
    const runs = 80;
    let covered = 0;
    const sds: number[] = [];
    const errors: number[] = [];
    let worst = 0;
    for (let r = 0; r < runs; r++) {
      const est = run(P, 2000, 100 + r);
      const cc = closedLoopCoefficientCovariance(est.model(), ctrl, est.parameterCovariance());
      const dom = poleConfidence(cc.coeffs, cc.covariance).reduce((x, y) => (y.radius > x.radius ? y : x));
      sds.push(dom.radiusStd);
      errors.push(Math.abs(dom.radius - truth));
      worst = Math.max(worst, Math.abs(dom.radius - truth) / dom.radiusStd);
      if (Math.abs(dom.radius - truth) <= 1.959964 * dom.radiusStd) covered++;
    }
    const median = (v: number[]) => [...v].sort((x, y) => x - y)[v.length >> 1]!;
    // robust spread about the truth: 1.4826 x the median absolute error (normal consistency factor)
    const spread = 1.4826 * median(errors);
    const ratio = median(sds) / spread;
    // measured (real pole / complex pair): 77/80 and 77/80 covered, median sd 1.90x and 1.11x the
    // spread, worst error 2.8 and 2.9 sd. With the HAC sum of the scores over na lags (4e771a5):
    // 75/80 and 75/80, 1.48x and 1.88x, worst 4.8 and 6.7 sd; with the covariance of 995179d (real
    // pole): 80/80 covered, median sd 0.97 = 141x
    expect(covered / runs).toBeGreaterThanOrEqual(0.88);
    expect(covered / runs).toBeLessThanOrEqual(0.99);
    expect(ratio).toBeGreaterThan(0.5);
    expect(ratio).toBeLessThan(2);
    // no error far out in the tail: for 80 normal errors P(max |z| > 4) = 80 x 6.3e-5 = 0.5 %
    expect(worst).toBeLessThan(4);
  });
});
