/**
 * Steady-state figures and the live routine assessment for `npm run bench:pipeline`.
 *
 * History writing and checkpoints reach their steady rate only after minutes, so a short run
 * understates the server's CPU per sample. `SteadyMarks` records the server's CPU, the MariaDB
 * process's CPU, accepted samples and the assessment's own time every few seconds, and reports the
 * rates over the last part of the run (`--tail`, a fraction, default 0.5 in --steady runs).
 *
 * `BenchAssessment` runs the live routine assessment (server/assessment/assessor.ts, the code the
 * server runs) on every bench loop, as server/assessment/service.ts does: `push` from the ingest
 * sink, `runDue` on a 250 ms timer with a 15 ms budget. Its time is measured inside the same run:
 * process CPU time around each `runDue` tick and each full-window run (process.cpuUsage), wall
 * time around each `push` (a call of a few µs, where a system call per call would cost more than
 * the call; wall time is its CPU time unless the kernel preempts the thread, so an upper bound on
 * a busy machine). The per-sample cost without it is the server's CPU per sample minus that time.
 */
import { performance } from "node:perf_hooks";
import { parseLoopConfig } from "@/lib/assessment";
import type { SampleDto } from "@/lib/domain/types";
import { LiveAssessor, RERUN_FACTOR, strideFor, WINDOW_SAMPLES } from "@/server/assessment/assessor";
import type { LoopConfig as AssessConfig } from "@/lib/assessment";

/** Process CPU time (user + system) since `c0`, ms. */
function cpuMs(c0: NodeJS.CpuUsage): number {
  const c = process.cpuUsage(c0);
  return (c.user + c.system) / 1e3;
}

export class BenchAssessment {
  readonly assessor = new LiveAssessor({ now: () => Date.now() });
  /** Milliseconds spent in push and runDue. */
  spentMs = 0;
  pushMs = 0;
  pushed = 0;
  runs = 0;
  private readonly timer: NodeJS.Timeout;
  private readonly configs = new Map<number, AssessConfig>();
  /** Every sample of the first loop, for the full-window measurement. */
  private readonly recorded: SampleDto[] = [];
  private recordId = -1;

  constructor(loops: { loopId: number; tag: string; periodS: number; kp: number; ti: number }[]) {
    for (const l of loops) {
      const config = parseLoopConfig({
        tag: l.tag,
        description: "bench loop",
        kind: "flow",
        units: "%",
        pvLo: 0,
        pvHi: 100,
        samplePeriodS: l.periodS,
        normalMode: "auto",
        controller: { kp: l.kp, ti: l.ti, td: 0, action: "reverse", mvLo: 0, mvHi: 100, form: "ideal", derivativeOn: "pv", derivativeFilterS: 0 },
      });
      this.assessor.upsertLoop({ loopId: l.loopId, tenantId: 1, siteId: 1, config });
      this.configs.set(l.loopId, config);
      if (this.recordId < 0) this.recordId = l.loopId;
    }
    this.timer = setInterval(() => {
      const c0 = process.cpuUsage();
      this.runs += this.assessor.runDue(15);
      this.spentMs += cpuMs(c0);
    }, 250);
  }

  push(loopId: number, samples: readonly SampleDto[]): void {
    const t0 = performance.now();
    this.assessor.push(loopId, samples);
    const dt = performance.now() - t0;
    this.spentMs += dt;
    this.pushMs += dt;
    this.pushed += samples.length;
    if (loopId === this.recordId) this.recorded.push(...samples);
  }

  /**
   * The assessment's long-run cost per sample, which a run of minutes cannot reach (a full window
   * spans 40 integral times, and it is re-run after RERUN_FACTOR windows): push cost per sample
   * measured in the run, plus one full-window run (timed here, median of 5, on a window filled
   * with the first loop's own samples of this run, repeated in time) spread over the samples
   * between two runs.
   */
  steadyCost(): { pushUs: number; fullRunMs: number; samplesBetweenRuns: number; perSampleUs: number } | null {
    const config = this.configs.get(this.recordId);
    const rec = this.recorded;
    if (!config || rec.length < 2 || this.pushed === 0) return null;
    const stride = strideFor(config);
    const incoming = WINDOW_SAMPLES * stride;
    const spanMs = rec.at(-1)!.t - rec[0]!.t + config.samplePeriodS * 1000;
    const a = new LiveAssessor({ now: () => Date.now() });
    a.upsertLoop({ loopId: 1, tenantId: 1, siteId: 1, config });
    for (let k = 0, n = 0; n < incoming; k++)
      for (const s of rec) {
        if (n++ >= incoming) break;
        a.push(1, [{ ...s, t: s.t + k * spanMs }]);
      }
    const times: number[] = [];
    for (let i = 0; i < 5; i++) {
      const c0 = process.cpuUsage();
      a.assessNow(1);
      times.push(cpuMs(c0));
    }
    times.sort((x, y) => x - y);
    const fullRunMs = times[2]!;
    const pushUs = (1e3 * this.pushMs) / this.pushed;
    const samplesBetweenRuns = RERUN_FACTOR * incoming;
    return { pushUs, fullRunMs, samplesBetweenRuns, perSampleUs: pushUs + (1e3 * fullRunMs) / samplesBetweenRuns };
  }

  stop(): void {
    clearInterval(this.timer);
  }
}

interface Mark {
  at: number;
  cpuS: number;
  dbCpuS: number | null;
  accepted: number;
  assessMs: number;
}

export interface SteadyFigures {
  fromS: number;
  toS: number;
  samples: number;
  samplesPerS: number;
  serverUsPerSample: number;
  dbUsPerSample: number | null;
  assessUsPerSample: number | null;
}

export class SteadyMarks {
  private readonly marks: Mark[] = [];
  private readonly timer: NodeJS.Timeout;
  private readonly t0 = Date.now();

  constructor(
    private readonly read: () => { accepted: number; dbCpuS: number | null; assessMs: number },
    everyMs = 5_000,
  ) {
    this.mark();
    this.timer = setInterval(() => this.mark(), everyMs);
  }

  mark(): void {
    const cpu = process.cpuUsage();
    const r = this.read();
    this.marks.push({ at: Date.now(), cpuS: (cpu.user + cpu.system) / 1e6, dbCpuS: r.dbCpuS, accepted: r.accepted, assessMs: r.assessMs });
  }

  stop(): void {
    clearInterval(this.timer);
    this.mark();
  }

  /** The mark the run's time axis starts at: the last one before the first accepted sample (process start-up left out). */
  private start(): Mark | undefined {
    const i = this.marks.findIndex((m) => m.accepted > 0);
    return i < 0 ? undefined : this.marks[Math.max(0, i - 1)];
  }

  /** Rates between the first mark at or after `fraction` of the run's end and the last mark. */
  tail(fraction: number, withAssessment: boolean): SteadyFigures | null {
    const last = this.marks.at(-1);
    const s = this.start();
    if (!last || !s) return null;
    const from = s.at + (1 - fraction) * (last.at - s.at);
    return this.between(this.marks.find((m) => m.at >= from), last, withAssessment);
  }

  /** Rates over the first `seconds` of the run (what a short run would read). */
  head(seconds: number, withAssessment: boolean): SteadyFigures | null {
    const s = this.start();
    if (!s) return null;
    const upTo = this.marks.filter((m) => m.at <= s.at + seconds * 1000 + 500);
    return this.between(s, upTo.at(-1), withAssessment);
  }

  private between(first: Mark | undefined, last: Mark | undefined, withAssessment: boolean): SteadyFigures | null {
    if (!first || !last || first === last) return null;
    const n = last.accepted - first.accepted;
    if (n <= 0) return null;
    return {
      fromS: (first.at - this.t0) / 1000,
      toS: (last.at - this.t0) / 1000,
      samples: n,
      samplesPerS: n / ((last.at - first.at) / 1000),
      serverUsPerSample: (1e6 * (last.cpuS - first.cpuS)) / n,
      dbUsPerSample: last.dbCpuS !== null && first.dbCpuS !== null ? (1e6 * (last.dbCpuS - first.dbCpuS)) / n : null,
      assessUsPerSample: withAssessment ? (1e3 * (last.assessMs - first.assessMs)) / n : null,
    };
  }
}

/** One line per figure set; the assessment's added cost is stated against the cost without it. */
export function describeSteady(label: string, f: SteadyFigures | null): string {
  if (!f) return `${label}: not enough marks (run longer)`;
  const parts = [
    `${label} (${f.fromS.toFixed(0)}-${f.toS.toFixed(0)} s of the run, ${f.samples} samples, ${f.samplesPerS.toFixed(0)} samples/s): server CPU ${f.serverUsPerSample.toFixed(2)} us/sample`,
  ];
  if (f.dbUsPerSample !== null) parts.push(`MariaDB ${f.dbUsPerSample.toFixed(2)} us/sample`);
  if (f.assessUsPerSample !== null) {
    const without = f.serverUsPerSample - f.assessUsPerSample;
    parts.push(
      `live assessment ${f.assessUsPerSample.toFixed(3)} us/sample of it (target <= 2 us), pipeline without it ${without.toFixed(2)} us/sample, ratio added/without ${(f.assessUsPerSample / without).toFixed(3)}`,
    );
  }
  return parts.join("; ");
}
