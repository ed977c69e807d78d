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
 * sink, `runDue` on a 250 ms timer with a 15 ms budget. Its time is measured inside the same run
 * with `performance.now()` around both calls (wall time of synchronous main-thread work, which is
 * its CPU time unless the kernel preempts the thread: an upper bound on a busy machine). The
 * per-sample cost without it is the server's CPU per sample minus that time.
 */
import { performance } from "node:perf_hooks";
import { parseLoopConfig } from "@/lib/assessment";
import type { SampleDto } from "@/lib/domain/types";
import { LiveAssessor } from "@/server/assessment/assessor";

export class BenchAssessment {
  readonly assessor = new LiveAssessor({ now: () => Date.now() });
  /** Milliseconds spent in push and runDue. */
  spentMs = 0;
  runs = 0;
  private readonly timer: NodeJS.Timeout;

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
    }
    this.timer = setInterval(() => {
      const t0 = performance.now();
      this.runs += this.assessor.runDue(15);
      this.spentMs += performance.now() - t0;
    }, 250);
  }

  push(loopId: number, samples: readonly SampleDto[]): void {
    const t0 = performance.now();
    this.assessor.push(loopId, samples);
    this.spentMs += performance.now() - t0;
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

  /** Rates between the first mark at or after `fraction` of the run's end and the last mark. */
  tail(fraction: number, withAssessment: boolean): SteadyFigures | null {
    const last = this.marks.at(-1);
    if (!last) return null;
    const from = this.t0 + (1 - fraction) * (last.at - this.t0);
    return this.between(this.marks.find((m) => m.at >= from), last, withAssessment);
  }

  /** Rates over the first `seconds` of the run (what a short run would read). */
  head(seconds: number, withAssessment: boolean): SteadyFigures | null {
    const upTo = this.marks.filter((m) => m.at <= this.t0 + seconds * 1000 + 500);
    return this.between(this.marks[0], upTo.at(-1), withAssessment);
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
