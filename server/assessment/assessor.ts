/**
 * Live routine assessment (docs/assessment.md, "Live use"): each loop's accepted good samples go
 * into a bounded window (`AssessRing`), and `assessLoop` — the same function the offline `assess`
 * command runs — is re-run on it from time to time. No I/O here: the service (service.ts) persists
 * and publishes the results.
 *
 * CPU budget: at most 2 µs of server CPU per incoming sample on average. `assessLoop` costs about
 * 1.5–2 µs per window sample (bench:live-assess: a 3,600-sample window in 6–7.5 ms of CPU on a
 * busy machine, on a mix where two loops in three oscillate; it was 2–3 µs before the stiction
 * fit's and the FFTs' speed-up; bench:assess-speed: one day at 1 s in 0.2–0.4 s of CPU), so a
 * window of n stored samples costs at most ≈ 2.5·n µs; the push itself
 * 0.1–0.2 µs per sample. Once the window is full it is re-run only after RERUN_FACTOR·n new
 * samples (n counted in incoming samples, i.e. times the decimation stride): 2.5·n / (2·n) ≈ 1.25 µs
 * per sample (1.5 µs at 3 µs per window sample), so half of the data is assessed and a verdict is
 * at most two windows old; after FIT_RERUN_FACTOR·n when the run fitted the sensitivity peak (a
 * dead time configured; the fit about doubles a run's CPU). While it fills, runs come after FILL_RERUN_FACTOR·n new samples, at
 * n = 60, 150, 375, ... (each 2.5 times the last, so the first verdict, or "not judged yet · about
 * N min", comes after a minute of data at 1 s); each covers all data so far, so that first fill
 * costs up to 2.5/1.5 window samples per incoming one (≈ 4 µs per sample for one window's length,
 * ≈ 15 ms per loop in all at 3,600 samples). Loops are staggered: each loop's first run is offset
 * by a share of its own interval taken from its id, and due loops run from a timer in small
 * batches with a time cap per tick.
 *
 * Each result is grouped with the site's other loops by oscillation period (site-groups.ts): a
 * sticking valve whose period other loops of the site share becomes a shared oscillation. Then
 * the verdict is cross-checked against the loop's tracked model (lib/assessment/model-check.ts,
 * `modelOf` reads the tracker's LoopAssessment), and again whenever the tracker's model changes what
 * the check says (`recheckModel`, at most once per RECHECK_MIN_MS). Without such peers and without
 * a trusted model the report is exactly what `assessLoop` gave (live = offline on the same samples).
 */
import { assessLoop, type AssessMode, type LoopConfig as AssessConfig } from "@/lib/assessment";
import { applyModelCheck, checkAgainstModel, type ModelCheckKind, type ModelView } from "@/lib/assessment/model-check";
import type { SampleDto } from "@/lib/domain/types";
import type { RecordInput } from "@/lib/work-list/record";
import { AssessRing } from "./ring";
import { applySharedOscillation, sharedOscillationOf, type PeriodPeer } from "./site-groups";

/** Window length in stored samples (memory: 33 bytes per sample, ≈ 120 kB per loop). */
export const WINDOW_SAMPLES = 3_600;
/** Once the window is full, re-run after this many times its (incoming) length: see the CPU budget above. */
export const RERUN_FACTOR = 2;
/**
 * Once the window is full, re-run after this many times its length when the last run fitted the
 * loop's sensitivity peak (lib/assessment/loop-margin.ts: a healthy or possibly sluggish loop with
 * a dead time, about twice the CPU of a run without it; bench:live-assess --dead-time), so that
 * such loops stay inside the same budget; their verdict is then at most four windows old.
 */
export const FIT_RERUN_FACTOR = 4;
/** While the window fills, re-run after this many times the data so far (the growth of the early runs). */
export const FILL_RERUN_FACTOR = 1.5;
/** First assessment after this many samples, or a minute of data when that is fewer samples. */
export const FIRST_RUN_SAMPLES = 60;
const FIRST_RUN_S = 60;
/** The window is made to span at least this many integral times (or dead times), capped at 24 h (decimated). */
const SPAN_TIME_SCALES = 40;
const MAX_SPAN_S = 24 * 3_600;
/** A changed model word re-issues a loop's verdict at most this often (ms; ours: no churn from a model near a level). */
export const RECHECK_MIN_MS = 30_000;

/**
 * The full window's re-run factor after a run of `assessLoop` on it: FIT_RERUN_FACTOR when the run
 * fitted the sensitivity peak (a figure came out, or a dead time is configured and the verdict is
 * one the fit is asked on: healthy or sluggish, uncompressed), else RERUN_FACTOR.
 */
export function rerunFactor(own: ReturnType<typeof assessLoop>, config: AssessConfig): number {
  const fitted = own.details.loopMargin !== null || (!!config.deadTimeS && !own.details.compression.compressed && (own.diagnosis.label === "healthy" || own.diagnosis.label === "sluggish-tuning"));
  return fitted ? FIT_RERUN_FACTOR : RERUN_FACTOR;
}

export interface LiveLoop {
  loopId: number;
  tenantId: number;
  siteId: number;
  /** The loop as the offline command's LOOP.json gives it; samplePeriodS = the telemetry period. */
  config: AssessConfig;
  /** The loop's commissioned closed-loop time constant, s: the model check's speed level (null: none). */
  baselineTimeConstantS?: number | null;
  /** The tenant's sluggish-tuning multiple of that baseline (work-list settings; absent: the default). */
  sluggishMultiple?: number;
}

/** One assessment of a loop, as the work list records it. */
export type LiveResult = RecordInput;

interface Entry {
  loop: LiveLoop;
  /** Config at the stored period (samplePeriodS × stride). */
  windowConfig: AssessConfig;
  ring: AssessRing;
  sinceRun: number;
  /** Incoming samples before the first run (and the least between runs). */
  firstRun: number;
  dueAfter: number;
  due: boolean;
  /** The latest result before the model check (the site grouping applied), and what the check said then. */
  unchecked: LiveResult | null;
  checkKind: ModelCheckKind;
  checkedAt: number;
}

/** Decimation stride so the window spans SPAN_TIME_SCALES loop time scales (ours). */
export function strideFor(config: AssessConfig, capacity = WINDOW_SAMPLES): number {
  const T = config.samplePeriodS;
  const ti = config.controller.ti && config.controller.ti > 0 ? config.controller.ti : null;
  const scale = Math.max(ti ?? 0, config.deadTimeS ?? 0);
  const span = Math.min(MAX_SPAN_S, Math.max(capacity * T, SPAN_TIME_SCALES * scale));
  return Math.max(1, Math.ceil(span / (capacity * T) - 1e-9));
}

/** Stagger offset in [0, 1) from the loop id (Knuth's multiplicative hash). */
function stagger(loopId: number): number {
  return ((loopId * 2654435761) >>> 0) / 2 ** 32;
}

export class LiveAssessor {
  private readonly loops = new Map<number, Entry>();
  private readonly dueQueue: number[] = [];
  /** Index of the next id to take from dueQueue. */
  private dueHead = 0;
  private readonly latest = new Map<number, LiveResult>();
  /** The latest detected oscillation of each loop, per site (for the site period grouping). */
  private readonly periods = new Map<number, Map<number, PeriodPeer>>();

  constructor(
    private readonly opts: {
      capacity?: number;
      now: () => number;
      onResult?: (r: LiveResult) => void;
      /** The loop's current assessment from its tracker (the model the verdict is cross-checked against). */
      modelOf?: (loopId: number) => ModelView | null | undefined;
    },
  ) {}

  get size(): number {
    return this.loops.size;
  }

  /**
   * Adds or reconfigures a loop; a changed period, range or tuning starts its window again (data
   * from before a tuning change say nothing of the loop after it); a new dead time alone keeps it.
   */
  upsertLoop(loop: LiveLoop): void {
    const capacity = this.opts.capacity ?? WINDOW_SAMPLES;
    const old = this.loops.get(loop.loopId);
    const stride = strideFor(loop.config, capacity);
    const windowConfig: AssessConfig = { ...loop.config, samplePeriodS: loop.config.samplePeriodS * stride };
    const same = old && old.ring.stride === stride && JSON.stringify(old.loop.config) === JSON.stringify(loop.config);
    if (same) {
      old.loop = loop;
      return;
    }
    // A new dead time (the engineer's or a step test's) changes no sample: the window stays, and the next run (soon) uses it.
    if (old && old.ring.stride === stride && JSON.stringify({ ...old.loop.config, deadTimeS: null, stepTestDeadTimeS: null }) === JSON.stringify({ ...loop.config, deadTimeS: null, stepTestDeadTimeS: null })) {
      old.loop = loop;
      old.windowConfig = windowConfig;
      old.dueAfter = Math.min(old.dueAfter, old.firstRun);
      return;
    }
    const firstRun = Math.max(8 * stride, Math.min(FIRST_RUN_SAMPLES, Math.ceil(FIRST_RUN_S / loop.config.samplePeriodS)));
    this.loops.set(loop.loopId, {
      loop,
      firstRun,
      windowConfig,
      ring: new AssessRing(capacity, stride),
      sinceRun: 0,
      // The first run comes early even for a decimated window (a few stored samples cost nothing): it says how much data is still needed.
      dueAfter: Math.max(1, Math.round(firstRun * (1 + 0.5 * stagger(loop.loopId)))),
      due: false,
      unchecked: null,
      checkKind: "none",
      checkedAt: 0,
    });
  }

  removeLoop(loopId: number): void {
    this.loops.delete(loopId);
    this.latest.delete(loopId);
    for (const m of this.periods.values()) m.delete(loopId);
  }

  has(loopId: number): boolean {
    return this.loops.has(loopId);
  }

  /** Accepted samples of a loop (SampleDto: t in epoch ms); only good ones enter the window. */
  push(loopId: number, samples: readonly SampleDto[]): void {
    const e = this.loops.get(loopId);
    if (!e) return;
    for (const s of samples) {
      if (s.quality !== undefined && s.quality !== "good") continue;
      if (e.ring.push(s.t / 1000, s.sp, s.pv, s.mv, s.mode as AssessMode)) e.sinceRun++;
    }
    if (!e.due && e.sinceRun >= e.dueAfter) {
      e.due = true;
      this.dueQueue.push(loopId);
    }
  }

  /** Runs due assessments until `maxMs` of wall time is used; returns how many ran. */
  runDue(maxMs = 20): number {
    const start = performance.now();
    let ran = 0;
    while (this.dueHead < this.dueQueue.length && performance.now() - start < maxMs) {
      const id = this.dueQueue[this.dueHead++]!;
      const e = this.loops.get(id);
      if (!e || !e.due) continue;
      this.assess(e);
      ran++;
    }
    // Drop the taken ids now and then (shift() would move the whole queue at every run).
    if (this.dueHead === this.dueQueue.length || this.dueHead > 1_024) {
      this.dueQueue.splice(0, this.dueHead);
      this.dueHead = 0;
    }
    return ran;
  }

  /** Assesses one loop now (tests, and an engineer's request). */
  assessNow(loopId: number): LiveResult | null {
    const e = this.loops.get(loopId);
    return e ? this.assess(e) : null;
  }

  /** The window a loop's assessment runs on (for the evidence panel and tests). */
  window(loopId: number): { samples: ReturnType<AssessRing["samples"]>; config: AssessConfig } | null {
    const e = this.loops.get(loopId);
    return e ? { samples: e.ring.samples(), config: e.windowConfig } : null;
  }

  /**
   * The loop's tracker has a new state: when its model now says something else about the latest
   * verdict (agree/disagree/poorly damped/none), the verdict is issued again with the new word
   * (same window, no re-run of the assessment). Cheap when nothing changed: one comparison.
   */
  recheckModel(loopId: number): LiveResult | null {
    const e = this.loops.get(loopId);
    if (!e?.unchecked || !this.opts.modelOf) return null;
    const model = this.modelFor(e);
    const kind = checkAgainstModel(e.unchecked.report, model).kind;
    const at = this.opts.now();
    if (kind === e.checkKind || at - e.checkedAt < RECHECK_MIN_MS) return null;
    return this.issue(e, { ...e.unchecked, at, report: applyModelCheck(e.unchecked.report, model) }, kind);
  }

  latestOf(loopId: number): LiveResult | null {
    return this.latest.get(loopId) ?? null;
  }

  /** A result restored from storage (shown until the loop's first live run). */
  restore(r: LiveResult): void {
    if (this.latest.has(r.loopId)) return;
    this.latest.set(r.loopId, r);
    this.notePeriod(r);
  }

  private notePeriod(r: LiveResult): void {
    const osc = r.report.oscillation;
    let site = this.periods.get(r.siteId);
    for (const [id, m] of this.periods) if (id !== r.siteId) m.delete(r.loopId);
    if (!osc.detected || osc.periodS === null || !(osc.periodS > 0)) {
      site?.delete(r.loopId);
      return;
    }
    if (!site) this.periods.set(r.siteId, (site = new Map()));
    const tag = this.loops.get(r.loopId)?.loop.config.tag ?? `loop ${r.loopId}`;
    site.set(r.loopId, { loopId: r.loopId, tag, siteId: r.siteId, periodS: osc.periodS, at: r.at, windowS: r.windowS });
  }

  private assess(e: Entry): LiveResult | null {
    e.due = false;
    const n = e.ring.size;
    const stride = e.ring.stride;
    e.sinceRun = 0;
    if (n < 2) {
      e.dueAfter = e.firstRun;
      return null;
    }
    const own = assessLoop(e.ring.samples(), e.windowConfig);
    const at = this.opts.now();
    const windowS = e.ring.spanS;
    const { loopId, siteId } = e.loop;
    const periodS = own.oscillation.detected ? own.oscillation.periodS : null;
    const shared = sharedOscillationOf({ loopId, siteId, periodS, at, windowS }, this.periods.get(siteId)?.values() ?? []);
    const grouped = applySharedOscillation(own, shared);
    const model = this.modelFor(e);
    const report = applyModelCheck(grouped, model);
    // Next run: the CPU budget's interval, or later when the verdict says how much data it needs.
    const needs = report.diagnosis.needsS ? report.diagnosis.needsS / e.loop.config.samplePeriodS : 0;
    const factor = n < e.ring.capacity ? FILL_RERUN_FACTOR : rerunFactor(own, e.windowConfig);
    e.dueAfter = Math.max(e.firstRun, Math.ceil(Math.min(Math.max(factor * n * stride, needs), factor * e.ring.capacity * stride)));
    const r: LiveResult = { loopId, tenantId: e.loop.tenantId, siteId, at, report, windowSamples: n, windowS };
    e.unchecked = { ...r, report: grouped };
    return this.issue(e, r, checkAgainstModel(grouped, model).kind);
  }

  /** The tracker's model of the loop with the loop's baseline time constant (the speed check's level). */
  private modelFor(e: Entry): ModelView | null | undefined {
    const model = this.opts.modelOf?.(e.loop.loopId);
    if (!model) return model;
    const { baselineTimeConstantS = null, sluggishMultiple } = e.loop;
    return { ...model, baselineTimeConstantS, ...(sluggishMultiple === undefined ? {} : { sluggishMultiple }) };
  }

  private issue(e: Entry, r: LiveResult, kind: ModelCheckKind): LiveResult {
    e.checkKind = kind;
    e.checkedAt = r.at;
    this.latest.set(r.loopId, r);
    this.notePeriod(r);
    this.opts.onResult?.(r);
    return r;
  }
}
