/**
 * A thinned history of one of a loop's figures (the decay ratio of its slowest-decaying
 * oscillating mode, or its spectral radius) and the time at which its linear trend reaches a
 * level, by `forecastCrossing` (Newey–West HAC interval, lib/control/forecast.ts). The tracker
 * keeps one per loop for the rim forecast (lib/domain/assessment.ts). Pure: times in seconds.
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

export class FigureTrend {
  private points: { t: number; value: number }[] = [];
  /** The last fit, reused while no point was added: a state is computed per estimation sample, a point only per `pointEveryS`. */
  private fit: { version: number; level: number; f: ReturnType<typeof forecastCrossing> | "failed" } | null = null;
  private version = 0;
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
    this.version++;
    const cutoff = tS - this.windowS;
    let drop = 0;
    while (drop < this.points.length && this.points[drop]!.t < cutoff) drop++;
    if (drop > 0) this.points.splice(0, drop);
  }

  /** Forget the history (the tracker stopped tracking, or the loop's configuration changed). */
  reset(): void {
    this.points = [];
    this.version++;
  }

  /**
   * When the trend reaches `level` (seconds, with its interval), or null when the trend is not
   * significant, moves away, or has already passed the level (then the level itself decides).
   * Extrapolates no further ahead than the history reaches back (common practice for trends).
   */
  crossing(level: number, nowS: number): { at: number; low: number; high: number } | null {
    if (this.points.length < 3) return null;
    if (!this.fit || this.fit.version !== this.version || this.fit.level !== level) {
      let f: ReturnType<typeof forecastCrossing> | "failed";
      try {
        const span = this.points[this.points.length - 1]!.t - this.points[0]!.t;
        f = forecastCrossing(this.points, level, { memory: this.memoryS, maxHorizon: span });
      } catch {
        f = "failed";
      }
      this.fit = { version: this.version, level, f };
    }
    const f = this.fit.f;
    if (f === "failed" || !f || f.slope <= 0 || f.at < nowS || !Number.isFinite(f.at) || !Number.isFinite(f.low) || !Number.isFinite(f.high)) return null;
    return { at: f.at, low: f.low, high: f.high };
  }
}
