/**
 * The data-only closed-loop model of a tracker (docs/architecture.md §4): an ARX model from the
 * set point to the PV, fitted without the plant model or the controller, whose poles are shown as
 * data poles beside the model-based ones (they never make the operator-facing figures).
 */
import { ArxEstimator, type ArxEstimatorState } from "@/lib/control/arx";
import { poleConfidence } from "@/lib/control/confidence";
import { polyRootsWithBounds } from "@/lib/control/root-bounds";
import { polyRoots } from "@/lib/control/roots";
import type { QTf } from "@/lib/control/types";
import type { PoleDto } from "@/lib/domain/types";
import { toPoleDto } from "./figures";

/** Largest order of the data-only closed-loop model. */
export const MAX_DATA_ORDER = 8;

export interface DataModelOptions {
  /** The plant structure and the controller at the estimation period: the closed loop's degree follows from them. */
  na: number;
  nb: number;
  nk: number;
  controller: QTf;
  forgetting: number;
  /** The estimation period, seconds. */
  T: number;
}

/** The data-only model's order: the closed loop's degree, between 2 and MAX_DATA_ORDER. */
export function dataOrderFor(o: Pick<DataModelOptions, "na" | "nb" | "nk" | "controller">): number {
  const degree = Math.max(o.na + o.controller.den.length - 1, o.nk + o.nb - 1 + o.controller.num.length - 1);
  return Math.min(MAX_DATA_ORDER, Math.max(2, degree));
}

export class DataOnlyModel {
  readonly order: number;
  estimator: ArxEstimator;

  constructor(private readonly options: DataModelOptions) {
    this.order = dataOrderFor(options);
    this.estimator = this.make();
  }

  private make(): ArxEstimator {
    return new ArxEstimator({
      na: this.order,
      nb: this.order,
      nk: 1,
      forgetting: this.options.forgetting,
      T: this.options.T,
      gating: "none",
      operatingPoint: "none",
    });
  }

  reset(): void {
    this.estimator = this.make();
  }

  /** One estimation sample (prefiltered SP and PV); learns only when `learn`. */
  push(r: number, y: number, learn: boolean): void {
    this.estimator.push(r, y, learn);
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

  /** The data-only poles with their confidence and conditioning bounds; [] when they cannot be computed. */
  poles(): PoleDto[] {
    try {
      const m = this.estimator.model();
      const coeffs = [1, ...m.a];
      const roots = polyRoots(coeffs);
      const cov = this.estimator.parameterCovariance().slice(0, m.a.length).map((row) => row.slice(0, m.a.length));
      let conf: ReturnType<typeof poleConfidence> | null = null;
      try {
        conf = poleConfidence(coeffs, cov, { roots });
      } catch {
        conf = null;
      }
      const bounded = polyRootsWithBounds(coeffs, { roots });
      return roots.map((z, i) => toPoleDto(z, conf?.[i], bounded[i]?.bound));
    } catch {
      return [];
    }
  }

  toJSON(): ArxEstimatorState {
    return this.estimator.toJSON();
  }
}
