/**
 * Outlier handling of a tracker's estimation samples (docs/architecture.md §4, lib/control/robust.ts):
 * a bad PV replaced by the trusted model's one-step prediction, and the residual test that tells
 * an isolated PV outlier (bounded by Huber's psi) from a real change of the process (a load step,
 * a valve slip or a plant change is data, and enters as it is).
 */
import type { InstrumentalArxEstimator } from "@/lib/control/riv";
import type { ArxPredictor, ResidualScreen } from "@/lib/control/robust";
import type { EstimationInput, PendingSample } from "./checkpoint";
import { PREFILTER_POLE } from "./conditioning";

type Signals = { u: number; y: number; r: number };

/** A trusted plant model with a warm residual screen, and the prefilter's last input and state. */
export interface OutlierJudge {
  plant: InstrumentalArxEstimator;
  predictor: ArxPredictor;
  screen: ResidualScreen;
  prev: Signals;
  filtered: Signals;
}

/**
 * A block whose only fault is a bad PV, while a trusted model and a warm residual screen exist:
 * its PV is the model's one-step prediction (an outlier of zero weight), and it is learnt from
 * like any other, so a bad PV inside a set-point response costs that response nothing. Otherwise
 * (an uncertain sample, a bad MV or SP, no trusted model: `j` null) it stays a stand-in that
 * updates nothing.
 */
export function predictBad(x: EstimationInput, j: OutlierJudge | null): EstimationInput {
  if (!x.bad || x.whole || !j) return x;
  const p = j.plant;
  const pred = j.predictor.predict(p.theta, p.na, p.nb, p.nk);
  if (!Number.isFinite(pred)) return x;
  return { ...x, y: j.prev.y + pred - PREFILTER_POLE * j.filtered.y, bad: false };
}

/**
 * Is the sample's a-priori prediction error beyond the residual test's threshold? `after`: judge
 * it as the sample after `after`, with `after` taken as an outlier (its bounded value in the
 * histories). Returns the raw PV that bounds the error, or null when the error is normal or the
 * sample cannot be judged (`j` null: no trusted model, a stood-in value in the regressors).
 */
export function largeError(x: EstimationInput, after: PendingSample | null, j: OutlierJudge | null): { yBounded: number; rawE: number } | null {
  if (!j || x.bad) return null;
  const { plant: p, prev, filtered: f, predictor, screen } = j;
  const c = PREFILTER_POLE;
  let fy: number;
  let pred: number;
  let yPrev: number;
  let fyBefore: number;
  if (after) {
    // the histories as they will be once `after` is taken bounded
    const a = after.sample;
    const fyA = c * f.y + (after.yBounded - prev.y);
    const fuA = c * f.u + (a.u - prev.u);
    pred = predictor.predictNext(p.theta, p.na, p.nb, p.nk, fyA, fuA);
    fy = c * fyA + (x.y - after.yBounded);
    yPrev = after.yBounded;
    fyBefore = fyA;
  } else {
    pred = predictor.predict(p.theta, p.na, p.nb, p.nk);
    fy = c * f.y + (x.y - prev.y);
    yPrev = prev.y;
    fyBefore = f.y;
  }
  const e = fy - pred;
  if (!Number.isFinite(e) || !screen.isLarge(e)) return null;
  return { yBounded: yPrev + pred + screen.bound(e) - c * fyBefore, rawE: e };
}
