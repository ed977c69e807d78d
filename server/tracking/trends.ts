/**
 * A tracker's figure histories and the forecasts drawn from them (docs/domain.md §5): the
 * spectral-radius history and its time to radius 1, and the decay-ratio trend and its time to the
 * loop's alarm level. Both are kept only while the alarms may act on the estimate.
 */
import { NON_TRACKING } from "@/lib/domain/alarms/conditions";
import { FigureTrend } from "@/lib/domain/trend";
import type { LoopStateDto, TrackerState } from "@/lib/domain/types";
import { forecastRadiusOne } from "./figures";

export interface FigureTrendsOptions {
  /** Estimator memory, estimation samples, and the estimation period, seconds. */
  memory: number;
  estimationPeriodS: number;
  /** Length of the (t, radius) history, seconds (at most one point per window/720). */
  forecastWindowS: number;
}

export class FigureTrends {
  private readonly memory: number;
  private readonly estimationPeriodS: number;
  readonly forecastWindowS: number;
  private readonly forecastPointEveryS: number;
  private cachedForecast: LoopStateDto["forecast"] = null;
  private readonly decayTrend: FigureTrend;
  radiusHistory: { t: number; value: number }[] = [];

  constructor(o: FigureTrendsOptions) {
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
  }

  /**
   * Push the state's radius and decay ratio at sample time `sampleT` (epoch ms) and set its
   * forecast; `level` is the loop's alarm decay ratio.
   */
  update(st: LoopStateDto, kind: { state: TrackerState }, sampleT: number, level: number): void {
    const t = sampleT / 1000;
    // the decay-ratio trend only while the alarms may act on the estimate (they reset it otherwise)
    if (NON_TRACKING.has(kind.state)) this.decayTrend.reset();
    else this.decayTrend.push(t, st.decayRatio);
    if (st.spectralRadius !== null && (kind.state === "tracking" || kind.state === "low-excitation")) {
      const last = this.radiusHistory[this.radiusHistory.length - 1];
      if (!last || t >= last.t + this.forecastPointEveryS) {
        this.radiusHistory.push({ t, value: st.spectralRadius });
        const cutoff = t - this.forecastWindowS;
        let drop = 0;
        while (drop < this.radiusHistory.length && this.radiusHistory[drop]!.t < cutoff) drop++;
        if (drop > 0) this.radiusHistory.splice(0, drop);
        this.cachedForecast = { alarmLevel: null, radiusOne: forecastRadiusOne(this.radiusHistory, this.memory * this.estimationPeriodS) };
      }
      st.forecast = this.cachedForecast;
    } else {
      this.cachedForecast = null;
    }
    const toLevel = NON_TRACKING.has(kind.state) ? null : this.decayTrend.crossing(level, t);
    if (toLevel || st.forecast) {
      const alarmLevel = toLevel ? { at: Math.round(toLevel.at * 1000), low: Math.round(toLevel.low * 1000), high: Math.round(toLevel.high * 1000), decayRatio: level } : null;
      st.forecast = { radiusOne: st.forecast?.radiusOne ?? null, alarmLevel };
      if (!st.forecast.radiusOne && !alarmLevel) st.forecast = null;
    }
  }
}
