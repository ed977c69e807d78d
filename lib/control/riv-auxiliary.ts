/**
 * The auxiliary model of the instrumental-variable estimator (lib/control/riv.ts): a noise-free
 * copy of the loop whose regressor serves as instruments (the bootstrap / "tailor-made" IV:
 * Söderström & Stoica, *System Identification*, 1989, sec. 8.2 and 10.4; Gilson & Van den Hof,
 * "Instrumental variable methods for closed-loop system identification", Automatica 41, 2005).
 * Closed loop: a plant estimate in closed loop with the controller C(q), driven by the set point
 * alone, gives y_s, u_s and z(k) = [-y_s(k-1) .. -y_s(k-na), u_s(k-nk) .. u_s(k-nk-nb+1)]. Open
 * loop (manual): the estimate driven by the measured MV. These correlate with the regressor far
 * better than delayed set points and still contain no measurement noise. A simulated loop that
 * diverges (a poor early estimate) is restarted at zero.
 */
import { shiftIn } from "./lag-vector";

/** Its part of the estimator's checkpoint. */
export interface AuxiliaryState {
  ys: number[];
  us: number[];
  es: number[];
  run: number;
  error: number;
  weight: number;
}

/** Above this (signal units) a simulated signal counts as diverged. */
const DIVERGED = 1e6;

export class AuxiliaryModel {
  /** Samples the copy has run since its last (re)start. */
  run = 0;
  /** Squared closed-loop simulation error of the last step (NaN when not available). */
  lastSimError = NaN;
  private readonly cNum: Float64Array;
  private readonly cDen: Float64Array;
  // simulated y, u and control error, newest first
  private readonly ys: Float64Array;
  private readonly us: Float64Array;
  private readonly es: Float64Array;
  private simError = 0;
  private simWeight = 0;

  constructor(
    private readonly na: number,
    private readonly nb: number,
    private readonly nk: number,
    controller: { num: readonly number[]; den: readonly number[] } | null,
    /** Weight of the running simulation error, (0, 1). */
    private readonly memory: number,
  ) {
    const c = controller ?? { num: [0], den: [1] };
    this.cNum = Float64Array.from(c.num, (v) => v / c.den[0]!);
    this.cDen = Float64Array.from(c.den, (v) => v / c.den[0]!);
    this.ys = new Float64Array(Math.max(1, na));
    this.us = new Float64Array(Math.max(nk + nb, this.cDen.length));
    this.es = new Float64Array(Math.max(1, this.cNum.length));
  }

  /** Back to zero signals (the real loop was open, the data void, or the copy diverged). */
  restart(): void {
    this.ys.fill(0);
    this.us.fill(0);
    this.es.fill(0);
    this.run = 0;
  }

  /**
   * One step at time k (histories hold k-1 and older): fills z with the noise-free regressor and
   * advances. `open`: the MV is external (measured u drives the estimate `theta`); else the
   * estimate runs in closed loop with the controller on the set point r.
   */
  step(theta: Float64Array, u: number, y: number, r: number, open: boolean, z: Float64Array): void {
    const { na, nb, nk } = this;
    const th = theta;
    const ys = this.ys;
    const us = this.us;
    const es = this.es;
    for (let i = 0; i < na; i++) z[i] = -ys[i]!;
    for (let j = 0; j < nb; j++) z[na + j] = us[nk - 1 + j]!;
    let yS = 0;
    for (let i = 0; i < na; i++) yS -= th[i]! * ys[i]!;
    for (let j = 0; j < nb; j++) yS += th[na + j]! * us[nk - 1 + j]!;
    let uNew: number;
    const e = r - yS;
    // closed-loop simulation error (model choice between structures), counted by the estimator on
    // informative samples only: the set-point responses, where structures differ
    this.lastSimError = !open && this.run > nk + na + nb ? (y - yS) ** 2 : NaN;
    if (open) {
      uNew = u;
    } else {
      const N = this.cNum;
      const D = this.cDen;
      uNew = N[0]! * e;
      for (let i = 1; i < N.length; i++) uNew += N[i]! * es[i - 1]!;
      for (let i = 1; i < D.length; i++) uNew -= D[i]! * us[i - 1]!;
    }
    if (!Number.isFinite(yS) || !Number.isFinite(uNew) || Math.abs(yS) > DIVERGED || Math.abs(uNew) > DIVERGED) {
      // a diverging simulated loop is itself evidence against the estimate
      this.simError = this.memory * this.simError + DIVERGED;
      this.simWeight = this.memory * this.simWeight + 1;
      this.lastSimError = NaN;
      this.restart();
      return;
    }
    if (na > 0) shiftIn(ys, yS);
    shiftIn(us, uNew);
    shiftIn(es, e);
    this.run++;
  }

  /** Adds the last step's simulation error to the running mean (informative samples only). */
  recordSimError(): void {
    if (!Number.isFinite(this.lastSimError)) return;
    this.simError = this.memory * this.simError + this.lastSimError;
    this.simWeight = this.memory * this.simWeight + 1;
  }

  /** Mean squared closed-loop simulation error (see `InstrumentalArxEstimator.simulationError`); NaN before 20 samples. */
  simulationError(): number {
    return this.simWeight > 20 ? this.simError / this.simWeight : NaN;
  }

  toJSON(): AuxiliaryState {
    return {
      ys: Array.from(this.ys),
      us: Array.from(this.us),
      es: Array.from(this.es),
      run: this.run,
      error: this.simError,
      weight: this.simWeight,
    };
  }

  /** Restores a checkpointed part; `arr`/`num` validate (and throw). */
  load(s: AuxiliaryState, arr: (name: string, v: unknown, len: number) => number[], num: (name: string, v: unknown) => number): void {
    this.ys.set(arr("aux.ys", s.ys, this.ys.length));
    this.us.set(arr("aux.us", s.us, this.us.length));
    this.es.set(arr("aux.es", s.es, this.es.length));
    this.run = num("aux.run", s.run);
    this.simError = num("aux.error", s.error);
    this.simWeight = num("aux.weight", s.weight);
  }
}
