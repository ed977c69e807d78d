/**
 * The gate every estimation sample passes before a tracker learns from it (docs/architecture.md §4,
 * lib/control/robust.ts): an isolated PV outlier is told from a real change of the process by the
 * next sample (./outliers.ts), a stood-in value taints the samples whose regressors still hold it,
 * and the fit watch turns a sustained rise of the a-priori prediction error into a fit collapse.
 */
import type { InstrumentalArxEstimator } from "@/lib/control/riv";
import { ArxPredictor, ResidualScreen, type ResidualScreenState } from "@/lib/control/robust";
import type { EstimationInput, PendingSample } from "./checkpoint";
import { largeError, predictBad, type OutlierJudge } from "./outliers";

type Signals = { u: number; y: number; r: number };

/** What the gate judges with: the reported plant, whether it is trusted, and the prefilter's last input and state. */
export interface GateContext {
  plant: InstrumentalArxEstimator;
  trusted: boolean;
  prev: Signals | null;
  filtered: Signals;
}

/** The gate's part of a tracker checkpoint. */
export interface SampleGateState {
  screen: ResidualScreenState;
  predictor: { y: number[]; u: number[] };
  taint: number;
  collapseInformative: number;
  pending: PendingSample | null;
}

export class SampleGate {
  /** Estimation samples still to skip because their regressors hold a stood-in value. */
  taint = 0;
  screen = new ResidualScreen();
  predictor: ArxPredictor;
  /** Informative plant samples when the current fit collapse began (-1: none). */
  private collapseInformative = -1;
  private pending: PendingSample | null = null;

  constructor(
    private readonly na: number,
    private readonly nkb: number,
  ) {
    this.predictor = new ArxPredictor(na, nkb);
  }

  reset(): void {
    this.screen = new ResidualScreen();
    this.collapseInformative = -1;
    this.pending = null;
  }

  /**
   * One estimation sample. An isolated PV outlier (robust residual test, lib/control/robust.ts)
   * is told from a real change of the process by the next sample: a sample whose prediction error
   * is beyond the threshold waits one estimation period; if the next one fits again under the
   * hypothesis that it was an outlier, it enters bounded (the plant model's prediction plus a
   * bounded error, in the prefilter state too), else as it is (a load step, a valve slip or a plant
   * change is data). Bounding every large error instead cut into real responses and biased the
   * estimate (measured on the demo loops: sticking valve, saturation).
   * `step` learns from one sample and says whether a state was computed; `context` is read
   * afresh before every judgement (a step changes it).
   */
  estimate(sample: EstimationInput, context: () => GateContext, step: (x: EstimationInput, outlier: boolean) => boolean): boolean {
    const bad = sample.bad;
    const held = this.pending;
    if (held) {
      this.pending = null;
      // a bad sample next cannot confirm anything: the bounded value is the safer one
      const isolated = bad || !largeError(sample, held, this.judge(context()));
      const first = step(isolated ? { ...held.sample, y: held.yBounded, rawE: held.rawE } : held.sample, isolated);
      return step(predictBad(sample, this.judge(context())), false) || first;
    }
    if (bad) return step(predictBad(sample, this.judge(context())), false);
    const judged = largeError(sample, null, this.judge(context()));
    if (judged) {
      this.pending = { sample, yBounded: judged.yBounded, rawE: judged.rawE };
      return false;
    }
    return step(sample, false);
  }

  /** What the outlier checks (./outliers.ts) judge with, or null when no trusted model may judge. */
  private judge(c: GateContext): OutlierJudge | null {
    const prev = c.prev;
    if (!prev || this.taint > 0 || !this.screen.ready() || !c.trusted) return null;
    return { plant: c.plant, predictor: this.predictor, screen: this.screen, prev, filtered: c.filtered };
  }

  /**
   * The residual screen's scale and the fit-collapse watch, fed with the model's a-priori
   * prediction error from the first trusted estimate on (before it, an early estimate would read
   * its own learning as a collapse).
   */
  watchFit(e: number, trusted: boolean, informative: number, memory: number): void {
    // once a trusted model set the baseline, the current estimate stays under watch: an estimate
    // that turns implausible because the data no longer fit any such model is a collapse too
    if (Number.isFinite(e) && (trusted || this.screen.baselineScale() > 0)) this.screen.record(e);
    if (!this.fitCollapsed()) this.collapseInformative = -1;
    else if (this.collapseInformative < 0) this.collapseInformative = informative;
    else if (informative - this.collapseInformative >= memory) {
      // refitted on a full memory of new set-point responses and still this far off: the new normal
      this.screen.rebase();
      this.collapseInformative = -1;
    }
  }

  fitCollapsed(): boolean {
    return this.screen.collapsed;
  }

  toJSON(): SampleGateState {
    const p = this.pending;
    return { screen: this.screen.toJSON(), predictor: this.predictor.toJSON(), taint: this.taint, collapseInformative: this.collapseInformative, pending: p ? { sample: { ...p.sample }, yBounded: p.yBounded, rawE: p.rawE } : null };
  }

  /** Resume from a checkpoint's part; from an older checkpoint (or a malformed part) the gate starts afresh. */
  restore(rb: SampleGateState | null | undefined): void {
    const screen = new ResidualScreen();
    const predictor = new ArxPredictor(this.na, this.nkb);
    const robustOk = !!rb && screen.restore(rb.screen) && predictor.restore(rb.predictor) && Number.isInteger(rb.taint) && Number.isFinite(rb.collapseInformative);
    this.screen = robustOk ? screen : new ResidualScreen();
    this.predictor = robustOk ? predictor : new ArxPredictor(this.na, this.nkb);
    this.taint = robustOk && rb ? Math.max(0, rb.taint) : 0;
    this.collapseInformative = robustOk && rb ? rb.collapseInformative : -1;
    const pend = robustOk && rb ? rb.pending : null;
    const pendOk = !!pend && [pend.yBounded, pend.rawE, pend.sample?.u, pend.sample?.y, pend.sample?.r, pend.sample?.t].every((v) => typeof v === "number" && Number.isFinite(v));
    this.pending = pendOk && pend ? { sample: { ...pend.sample }, yBounded: pend.yBounded, rawE: pend.rawE } : null;
  }
}
