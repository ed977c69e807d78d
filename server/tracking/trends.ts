/**
 * A tracker's figure histories and the forecasts drawn from them (docs/domain.md §5): the
 * spectral-radius history and its time to radius 1, and the decay-ratio trend and its time to the
 * loop's alarm level. Both are kept only while the alarms may act on the estimate.
 */
import { NON_TRACKING } from "@/lib/domain/alarms/conditions";
import { FigureTrend } from "@/lib/domain/trend";
import type { LoopStateDto, TrackerState } from "@/lib/domain/types";
import type { TrendPoint } from "@/lib/control/forecast";
import type { Crossing } from "@/lib/domain/assessment";
import { forecastRadiusOne, radiusPoint } from "./figures";

export interface FigureTrendsOptions {
  /** Estimator memory, estimation samples, and the estimation period, seconds. */
  memory: number;
  estimationPeriodS: number;
  /** Length of the (t, radius) history, seconds (at most one point per window/720). */
  forecastWindowS: number;
  /** The radius-one forecast from the parameter drift (./drift-source.ts); undefined: none, the radius history's trend serves. */
  drift?: () => Crossing | null | undefined;
}

export class FigureTrends {
  private readonly memory: number;
  private readonly estimationPeriodS: number;
  readonly forecastWindowS: number;
  private readonly forecastPointEveryS: number;
  private cachedForecast: LoopStateDto["forecast"] = null;
  private readonly decayTrend: FigureTrend;
  radiusHistory: TrendPoint[] = [];
  private readonly drift: () => Crossing | null | undefined;

  constructor(o: FigureTrendsOptions) {
    this.drift = o.drift ?? (() => undefined);
    this.memory = o.memory;
    this.estimationPeriodS = o.estimationPeriodS;
    this.forecastWindowS = o.forecastWindowS;
    this.forecastPointEveryS = Math.max(this.estimationPeriodS, this.forecastWindowS / 720);
    const memoryS = this.memory * this.estimationPeriodS;
    this.decayTrend = new FigureTrend({ memoryS, windowS: Math.max(7200, 20 * memoryS) });
  }

  /** Forget the cached forecast (after a restore; the next point recomputes it). */
  clearForecast(): void {
    this.cachedForecast = null;
    this.radiusFitDue = false;
  }

  /**
   * While deferred (a historian backfill replaying samples) the histories are kept as live, but
   * no forecast is fitted per point: only the state that goes live needs one, and `settle` makes
   * it from the same histories, so it equals the forecast live telemetry of the same samples
   * would carry (the fit is about a fifth of a replay's CPU otherwise).
   */
  deferred = false;
  private radiusFitDue = false;
  private last: { tracking: boolean; hasRadius: boolean; t: number; level: number } | null = null;

  /**
   * Push the state's radius and decay ratio at sample time `sampleT` (epoch ms) and set its
   * forecast; `level` is the loop's alarm decay ratio.
   */
  update(st: LoopStateDto, kind: { state: TrackerState }, sampleT: number, level: number): void {
    const t = sampleT / 1000;
    const tracking = !NON_TRACKING.has(kind.state);
    // the decay-ratio trend only while the alarms may act on the estimate (they reset it otherwise)
    if (!tracking) this.decayTrend.reset();
    else this.decayTrend.push(t, st.decayRatio);
    const hasRadius = st.spectralRadius !== null && (kind.state === "tracking" || kind.state === "low-excitation");
    this.last = { tracking, hasRadius, t, level };
    if (hasRadius) {
      const last = this.radiusHistory[this.radiusHistory.length - 1];
      if (!last || t >= last.t + this.forecastPointEveryS) {
        this.radiusHistory.push(radiusPoint(t, st.spectralRadius!, st.radiusSd));
        const cutoff = t - this.forecastWindowS;
        let drop = 0;
        while (drop < this.radiusHistory.length && this.radiusHistory[drop]!.t < cutoff) drop++;
        if (drop > 0) this.radiusHistory.splice(0, drop);
        this.radiusFitDue = true;
        if (!this.deferred) this.fitRadius();
      }
    } else {
      this.cachedForecast = null;
      this.radiusFitDue = false;
    }
    if (!this.deferred) this.compose(st);
  }

  /** Fit the forecasts a deferred run skipped and set them on `st`, the state going live. */
  settle(st: LoopStateDto): void {
    if (this.radiusFitDue) this.fitRadius();
    this.compose(st);
  }

  private fitRadius(): void {
    const drift = this.drift();
    this.cachedForecast = { alarmLevel: null, radiusOne: drift !== undefined ? drift : forecastRadiusOne(this.radiusHistory, this.memory * this.estimationPeriodS) };
    this.radiusFitDue = false;
  }

  private compose(st: LoopStateDto): void {
    const l = this.last;
    if (!l) return;
    st.forecast = l.hasRadius ? this.cachedForecast : null;
    const toLevel = l.tracking ? this.decayTrend.crossing(l.level, l.t) : null;
    if (toLevel || st.forecast) {
      const alarmLevel = toLevel ? { at: Math.round(toLevel.at * 1000), low: Math.round(toLevel.low * 1000), high: Math.round(toLevel.high * 1000), decayRatio: l.level } : null;
      st.forecast = { radiusOne: st.forecast?.radiusOne ?? null, alarmLevel };
      if (!st.forecast.radiusOne && !alarmLevel) st.forecast = null;
    }
  }
}
