/**
 * The rim forecast's source (docs/domain.md §7): a linear drift of the plant's ARX parameters,
 * fitted to the prefiltered samples themselves over the forecast window
 * (lib/control/parameter-drift.ts), and the time at which the closed loop of the drifting plant
 * under the loop's controller reaches the unit circle (lib/control/drift-crossing.ts). Its
 * regressor and instruments are those of the configured-structure plant estimator
 * (lib/control/riv.ts: the noise-free regressor of an auxiliary closed loop of the current plant
 * estimate, delayed set points until that runs; delayed MVs in manual), and it learns from the
 * same informative samples. The forecast takes the drift as one of the plant's gain, the rates of
 * A(q) held at zero, unless the data reject that (lib/control/drift-restriction.ts). `forecast` is undefined (the caller falls back to the trend of the
 * radius history) while the window spans less than 10 estimator memories, or its sums are singular.
 */
import { driftCrossing } from "@/lib/control/drift-crossing";
import { restrictPoleDrift } from "@/lib/control/drift-restriction";
import { shiftIn } from "@/lib/control/lag-vector";
import { LinearDriftIv } from "@/lib/control/parameter-drift";
import { OPEN_AUX_MIN_PER_PARAMETER } from "@/lib/control/riv";
import { AuxiliaryModel } from "@/lib/control/riv-auxiliary";
import type { QTf } from "@/lib/control/types";
import type { Crossing } from "@/lib/domain/assessment";

export interface RadiusDriftOptions {
  na: number;
  nb: number;
  nk: number;
  /** Estimation period and the estimator memory, seconds; the forecast window, seconds. */
  T: number;
  memoryS: number;
  windowS: number;
  /** The loop's controller at T (auxiliary instruments). */
  controller: QTf;
  /** Smallest |z|_inf that counts as information (the plant estimator's). */
  instrumentThreshold: number;
  /** Newey–West lag of the score covariance, samples (the plant estimator's noise lags). */
  lags: number;
  /** The estimated noise model of the drift fit; absent: none. */
  noise?: DriftNoiseOption;
}

/**
 * The drift fit's estimated noise model (lib/control/drift-noise.ts): AR order and the residuals
 * it is fitted to, in estimator memories; the first model after `settleMemories` (kept below
 * `memories`: the kept samples must reach back to the start to be re-filtered). The tracker's
 * default is DEFAULT_DRIFT_NOISE below (docs/domain.md §7: better within ±15 % on all four rows
 * than without it, though the ramp stays below 80 %); `npm run bench:drift-noise` compares.
 */
export interface DriftNoiseOption {
  order: number;
  memories: number;
  /** Estimator memories of residuals before the first model (default 4: a settled drift estimate). */
  settleMemories?: number;
}

/**
 * The tracker's default noise model for the drift fit: AR(12) on the last 8 memories' residuals,
 * first fitted after 4 settled memories (docs/domain.md §7: within ±15 % and coverage through the
 * tracker with and without it). Order 0 (`NO_DRIFT_NOISE`): none, the plain prefiltered fit.
 */
export const DEFAULT_DRIFT_NOISE: DriftNoiseOption = { order: 12, memories: 8 };
export const NO_DRIFT_NOISE: DriftNoiseOption = { order: 0, memories: 0 };

export class RadiusDrift {
  private readonly fit: LinearDriftIv;
  private readonly aux: AuxiliaryModel;
  private readonly d: number;
  /** Past y, u and r (newest first), the regressor and the instruments. */
  private readonly hist: { y: Float64Array; u: Float64Array; r: Float64Array };
  private readonly phi: Float64Array;
  private readonly z: Float64Array;
  private count = 0;
  private informative = 0;
  private readySamples = 0;

  constructor(private readonly o: RadiusDriftOptions) {
    const d = (this.d = o.na + o.nb);
    const n = o.noise;
    const perMemory = o.memoryS / o.T;
    const noise = n && n.order > 0 ? { order: n.order, samples: Math.max(10 * n.order, Math.round(n.memories * perMemory)), settle: Math.round(Math.max(0, Math.min(n.settleMemories ?? 4, n.memories - 1)) * perMemory) } : undefined;
    this.fit = new LinearDriftIv({ d, window: o.windowS, block: o.memoryS, lags: o.lags, ...(noise ? { noise } : {}) });
    this.aux = new AuxiliaryModel(o.na, o.nb, o.nk, o.controller, 0.995);
    this.hist = { y: new Float64Array(o.na), u: new Float64Array(o.nk + d + 1), r: new Float64Array(o.nk + d) };
    this.phi = new Float64Array(d);
    this.z = new Float64Array(d);
  }

  reset(): void {
    this.fit.reset();
    this.aux.restart();
    for (const h of Object.values(this.hist)) h.fill(0);
    this.count = 0;
    this.informative = 0;
  }

  /**
   * One prefiltered sample at t (seconds), before the plant estimator takes it; `theta` is that
   * estimator's current estimate, `solved` whether it has one, `ready` whether it is reported
   * (enough informative samples, physical). The fit takes a sample only from one estimator memory
   * after the plant became ready: instruments from a still-learning estimate are weak, and such
   * early samples pulled the whole window towards the biased least-squares answer (one run of
   * the harness: a forecast 200 % late with them, 16 % without).
   */
  push(u: number, y: number, r: number, mode: "closed" | "open" | "skip", t: number, theta: Float64Array, solved: boolean, ready: boolean): void {
    const { na, nb, nk } = this.o;
    const d = this.d;
    for (let i = 0; i < na; i++) this.phi[i] = -this.hist.y[i]!;
    for (let j = 0; j < nb; j++) this.phi[na + j] = this.hist.u[nk - 1 + j]!;
    if (this.count >= nk + d + 1) {
      if (mode === "skip") {
        this.aux.restart();
        this.fit.gap();
      } else {
        const open = mode === "open";
        const useAux = solved && (!open || this.informative >= OPEN_AUX_MIN_PER_PARAMETER * d);
        if (useAux) this.aux.step(theta, u, y, r, open, this.z);
        if (!(useAux && this.aux.run > nk + d)) {
          const lags = open ? this.hist.u : this.hist.r;
          for (let i = 0; i < d; i++) this.z[i] = lags[nk - 1 + i]!;
        }
        let zmax = 0;
        for (let i = 0; i < d; i++) zmax = Math.max(zmax, Math.abs(this.z[i]!));
        const warm = ready ? this.readySamples++ : (this.readySamples = 0);
        const informative = zmax > this.o.instrumentThreshold;
        if (informative) this.informative++;
        // the others only pass through the fit's noise filter, if it has one (parameter-drift.ts)
        if (ready && warm >= this.o.memoryS / this.o.T) this.fit.add(t, this.phi, this.z, y, informative);
      }
    }
    if (na > 0) shiftIn(this.hist.y, y);
    shiftIn(this.hist.u, u);
    shiftIn(this.hist.r, r);
    this.count++;
  }

  /** Time (epoch ms) at which the drifting closed loop under `controller` reaches radius 1; undefined: no estimate (module doc). */
  forecast(controller: QTf): Crossing | null | undefined {
    try {
      const est = this.fit.estimate();
      if (!est || est.t - est.tFirst < 10 * this.o.memoryS) return undefined;
      // a drift of the gain (B) unless the rates of A are significant (drift-restriction.ts)
      const f = driftCrossing(restrictPoleDrift(est, this.o.na).estimate, this.o, controller);
      if (!f) return null;
      if (![f.at, f.low, f.high].every(Number.isFinite)) return undefined;
      return { at: Math.round(f.at * 1000), low: Math.round(f.low * 1000), high: Math.round(f.high * 1000) };
    } catch {
      return undefined;
    }
  }
}

