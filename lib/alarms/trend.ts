/**
 * The `rim-forecast` trend: a thinned history of one loop's margin measure (the decay ratio of
 * its dominant oscillating mode, period-invariant) and the time at which its linear trend reaches
 * the margin alarm level, by `forecastCrossing` (Newey–West HAC interval, lib/control/forecast.ts).
 * Pure: times are passed in (seconds).
 */
import { forecastCrossing } from "@/lib/control/forecast";

export interface TrendOptions {
  /** History kept, seconds (default 2 h). */
  windowS?: number;
  /** At most one point per this many seconds (default windowS / 720). */
  pointEveryS?: number;
  /** Estimator memory in seconds (sets the forecast's minimum span and autocorrelation lag). */
  memoryS?: number;
}

export class MarginTrend {
  private points: { t: number; value: number }[] = [];
  readonly windowS: number;
  readonly pointEveryS: number;
  readonly memoryS: number;

  constructor(opts: TrendOptions = {}) {
    this.windowS = opts.windowS ?? 7200;
    this.pointEveryS = opts.pointEveryS ?? this.windowS / 720;
    this.memoryS = opts.memoryS ?? 0;
  }

  get length(): number {
    return this.points.length;
  }

  /** Add a value at time tS (seconds); a null value (no oscillating mode now) leaves a gap. */
  push(tS: number, value: number | null): void {
    if (value == null || !Number.isFinite(value)) return;
    const last = this.points[this.points.length - 1];
    if (last && tS < last.t + this.pointEveryS) return;
    this.points.push({ t: tS, value });
    const cutoff = tS - this.windowS;
    let drop = 0;
    while (drop < this.points.length && this.points[drop]!.t < cutoff) drop++;
    if (drop > 0) this.points.splice(0, drop);
  }

  /** Forget the history (the tracker stopped tracking, or the loop's configuration changed). */
  reset(): void {
    this.points = [];
  }

  /**
   * Minutes from `nowS` until the trend reaches `level`, or null when the trend is not
   * significant, moves away, or has already passed the level (then `margin` itself decides).
   */
  minutesTo(level: number, nowS: number): number | null {
    if (this.points.length < 3) return null;
    try {
      // Extrapolate no further ahead than the history reaches back (common practice for trends).
      const span = this.points[this.points.length - 1]!.t - this.points[0]!.t;
      const f = forecastCrossing(this.points, level, { memory: this.memoryS, maxHorizon: span });
      if (!f || f.slope <= 0 || f.at < nowS) return null;
      return (f.at - nowS) / 60;
    } catch {
      return null;
    }
  }
}
