/**
 * The data-only closed-loop model of a tracker (docs/architecture.md §4): an ARX model from the
 * set point to the PV, fitted without the plant model or the controller, whose poles are shown as
 * data poles beside the model-based ones (they never make the operator-facing figures).
 *
 * Where it is fitted: at a decimated period Td = m Te (block averages of m estimation samples), not
 * at Te. At fast sampling the closed-loop poles at Te crowd toward z = 1, where the roots of a
 * degree-8 polynomial are ill-conditioned: one rounding error in the coefficients moves a cluster
 * by ~5e-3, more than its distance to the rim, so the conditioning bound straddles the unit circle
 * and decides nothing. At Td a cluster sits m times farther from z = 1 (z = e^{sT}), with about the
 * same bound. Rule: the expected closed-loop time constant spans SAMPLES_PER_TIME_CONSTANT to twice
 * that many samples of Td. It follows the sampling rule of thumb of 4-10 samples per rise time
 * (Åström & Wittenmark, *Computer-Controlled Systems*, 3rd ed., 1997, ch. 7; from memory); taking
 * the controller's integral time as the expected closed-loop time constant is our own proxy (a
 * loop tuned for a closed loop as fast as its plant has tau_cl ~ Ti; common practice), and without
 * integral action the model stays at Te. The poles are mapped back to Te by the principal m-th
 * root, z_Te = z_Td^(1/m) (z = e^{sT} at both periods), with their bounds and confidence, so the
 * map shows them beside the model-based poles; |z| < 1 is kept either way.
 */
import { ArxEstimator, type ArxEstimatorState } from "@/lib/control/arx";
import { poleConfidence } from "@/lib/control/confidence";
import { polyRootsWithBounds } from "@/lib/control/root-bounds";
import type { QTf } from "@/lib/control/types";
import type { PoleDto } from "@/lib/domain/types";
import { toPoleDto } from "./figures";
import { rootsOf } from "./pole-roots";

/** Largest order of the data-only closed-loop model. */
export const MAX_DATA_ORDER = 8;
/** Fewest samples of the data-only model's period per expected closed-loop time constant (see the module doc). */
export const SAMPLES_PER_TIME_CONSTANT = 5;

/** The data-only model's block being averaged (sums of prefiltered SP and PV over `count` estimation samples). */
export interface DataBlockState {
  sumR: number;
  sumY: number;
  count: number;
  learnAll: boolean;
}

export interface DataModelOptions {
  /** The plant structure and the controller at the estimation period: the closed loop's degree follows from them. */
  na: number;
  nb: number;
  nk: number;
  controller: QTf;
  forgetting: number;
  /** The estimation period Te, seconds. */
  T: number;
  /** The expected closed-loop time constant, seconds (the integral time); null: unknown, fitted at Te. */
  closedLoopTimeS: number | null;
}

/** Estimation samples per sample of the data-only model: the expected time constant spans 5 to 10 of them (see the module doc). */
export function dataDecimationFor(closedLoopTimeS: number | null, T: number): number {
  if (closedLoopTimeS === null || !(closedLoopTimeS > 0) || !(T > 0)) return 1;
  return Math.max(1, Math.floor(closedLoopTimeS / (SAMPLES_PER_TIME_CONSTANT * T)));
}

/** The data-only model's order: the closed loop's degree at its period (dead time in samples of Td), between 2 and MAX_DATA_ORDER. */
export function dataOrderFor(
  o: Pick<DataModelOptions, "na" | "nb" | "nk" | "controller">,
  decimation = 1,
): number {
  const nk = Math.ceil(o.nk / decimation);
  const degree = Math.max(
    o.na + o.controller.den.length - 1,
    nk + o.nb - 1 + o.controller.num.length - 1,
  );
  return Math.min(MAX_DATA_ORDER, Math.max(2, degree));
}

/**
 * A pole z of the model at Td = m Te as the pole at Te: the principal m-th root (z = e^{sT}).
 * The bound is the radius of a disk holding the image of every point of the disk |z' - z| <= bound
 * (radial and angular parts: |rho - r_e| <= r^(1/m) - max(r - b, 0)^(1/m) by concavity,
 * |dphi| <= asin(b / r) / m); a disk that reaches 0 or across the negative real axis has no
 * principal image of its own size and gets |w| + (r + b)^(1/m), except for a real root whose disk
 * meets no other (`staysReal`): real coefficient changes keep a simple real root on the real axis,
 * so only the radial part counts. A negative real pole at Td (a mode that changes sign every Td,
 * with no single counterpart at Te) is placed at the angle pi/m. The confidence is carried to first
 * order, dw/dz = w / (m z) (the delta method).
 */
export function poleAtEstimationPeriod(p: PoleDto, m: number, staysReal = false): PoleDto {
  if (m === 1) return p;
  const r = Math.hypot(p.re, p.im);
  if (r === 0)
    return {
      ...p,
      radius: 0,
      sdRadius: null,
      cov: null,
      bound: p.bound == null ? null : Math.pow(p.bound, 1 / m),
    };
  const th = Math.atan2(p.im, p.re);
  const re = Math.pow(r, 1 / m);
  const w = { re: re * Math.cos(th / m), im: re * Math.sin(th / m) };
  let bound: number | null = null;
  if (p.bound != null) {
    const b = p.bound;
    const radial = re - Math.pow(Math.max(r - b, 0), 1 / m);
    if (staysReal && p.im === 0 && b < r) bound = radial;
    else if (b >= r || Math.abs(th) + Math.asin(b / r) >= Math.PI)
      bound = re + Math.pow(r + b, 1 / m);
    else bound = radial + (re * Math.asin(b / r)) / m;
  }
  // dw/dz = w / (m z): a rotation by its argument, scaled by |w| / (m r)
  const scale = re / (m * r);
  const phi = th / m - th;
  const c = Math.cos(phi);
  const s = Math.sin(phi);
  let cov: PoleDto["cov"] = null;
  if (p.cov) {
    const [xx, xy, yy] = p.cov;
    // J C J^T with J = scale [[c, -s], [s, c]]
    const k = scale * scale;
    cov = [
      k * (c * c * xx - 2 * c * s * xy + s * s * yy),
      k * (c * s * (xx - yy) + (c * c - s * s) * xy),
      k * (s * s * xx + 2 * c * s * xy + c * c * yy),
    ];
  }
  return {
    re: w.re,
    im: w.im,
    radius: re,
    sdRadius: p.sdRadius === null ? null : p.sdRadius * scale,
    cov,
    bound,
  };
}

export class DataOnlyModel {
  readonly order: number;
  /** Estimation samples per sample of this model (Td = decimation Te). */
  readonly decimation: number;
  estimator: ArxEstimator;
  // the block being averaged
  private sumR = 0;
  private sumY = 0;
  private count = 0;
  private learnAll = true;

  constructor(private readonly options: DataModelOptions) {
    this.decimation = dataDecimationFor(options.closedLoopTimeS, options.T);
    this.order = dataOrderFor(options, this.decimation);
    this.estimator = this.make();
  }

  private make(): ArxEstimator {
    return new ArxEstimator({
      na: this.order,
      nb: this.order,
      nk: 1,
      // the same forgetting per sample: a memory of 1/(1 - lambda) samples of Td, m times longer in seconds
      forgetting: this.options.forgetting,
      T: this.options.T * this.decimation,
      gating: "none",
      operatingPoint: "none",
    });
  }

  reset(): void {
    this.estimator = this.make();
    this.clearBlock();
  }

  private clearBlock(): void {
    this.sumR = 0;
    this.sumY = 0;
    this.count = 0;
    this.learnAll = true;
  }

  /** One estimation sample (prefiltered SP and PV); a block of `decimation` of them is one sample of the model, learnt from only when every one may be. */
  push(r: number, y: number, learn: boolean): void {
    this.sumR += r;
    this.sumY += y;
    this.learnAll &&= learn;
    if (++this.count < this.decimation) return;
    const m = this.count;
    const all = this.learnAll;
    const sr = this.sumR;
    const sy = this.sumY;
    this.clearBlock();
    this.estimator.push(sr / m, sy / m, all);
  }

  /** Adopt a checkpointed estimator state (parsed by the caller) and its block being averaged (absent or malformed: a new block). */
  adopt(estimator: ArxEstimator, block: DataBlockState | null | undefined): void {
    this.estimator = estimator;
    this.clearBlock();
    if (
      block &&
      Number.isFinite(block.sumR) &&
      Number.isFinite(block.sumY) &&
      Number.isInteger(block.count) &&
      block.count >= 0 &&
      block.count < this.decimation
    ) {
      this.sumR = block.sumR;
      this.sumY = block.sumY;
      this.count = block.count;
      this.learnAll = block.learnAll === true;
    }
  }

  /** The block being averaged, for checkpoints. */
  blockJSON(): DataBlockState {
    return { sumR: this.sumR, sumY: this.sumY, count: this.count, learnAll: this.learnAll };
  }

  /** Enough updates for the poles to be shown. */
  get ready(): boolean {
    return this.estimator.updates >= Math.max(50, 10 * this.order);
  }

  /** All parameters are finite numbers. */
  finite(): boolean {
    const b = this.estimator.rls.theta;
    for (let i = 0; i < b.length; i++) if (!Number.isFinite(b[i]!)) return false;
    return true;
  }

  /** The data-only poles at Te with their confidence and conditioning bounds (computed at Td, mapped back); [] when they cannot be computed. */
  poles(): PoleDto[] {
    try {
      const m = this.estimator.model();
      const cov = this.estimator
        .parameterCovariance()
        .slice(0, m.a.length)
        .map((row) => row.slice(0, m.a.length));
      return dataPoles([1, ...m.a], cov, this.decimation);
    } catch {
      return [];
    }
  }

  toJSON(): ArxEstimatorState {
    return this.estimator.toJSON();
  }
}

/**
 * The poles of the data-only model's denominator `coeffs` (at Td = m Te; `cov` the covariance of
 * its coefficients after the leading 1, or null), each with its confidence and conditioning bound,
 * as poles at Te (`poleAtEstimationPeriod`).
 * @throws as `polyRoots` on a non-finite or zero polynomial.
 */
export function dataPoles(coeffs: number[], cov: number[][] | null, m: number): PoleDto[] {
  const roots = rootsOf(coeffs);
  let conf: ReturnType<typeof poleConfidence> | null = null;
  try {
    conf = cov ? poleConfidence(coeffs, cov, { roots }) : null;
  } catch {
    conf = null;
  }
  const bounded = polyRootsWithBounds(coeffs, { roots });
  const b = (i: number) => bounded[i]?.bound ?? Infinity;
  // a real root whose disk meets no other stays real under real coefficient changes
  const isolated = (i: number) =>
    roots.every(
      (w, j) => j === i || Math.hypot(w.re - roots[i]!.re, w.im - roots[i]!.im) > b(i) + b(j),
    );
  return roots.map((z, i) =>
    poleAtEstimationPeriod(
      toPoleDto(z, conf?.[i], bounded[i]?.bound),
      m,
      z.im === 0 && isolated(i),
    ),
  );
}
