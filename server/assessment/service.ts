/**
 * The live routine-assessment service (docs/assessment.md, "Live use"): fed by the pipeline with
 * each loop's accepted samples, it runs `LiveAssessor` on a timer, keeps the latest result per loop
 * in memory and in `loop_assessments` (restored at start), opens or updates work-list items
 * (lib/work-list/record.ts), mails the tenant's finding rules when an item opens, and sends
 * `loop:finding` to the tenant's room. Findings never enter the alarm service or its KPIs.
 */
import type { Sequelize } from "sequelize";
import { publicOrigin } from "@/lib/config";
import { findingPhrase, type LoopFinding } from "@/lib/domain/findings";
import { tenantRoom } from "@/lib/domain/events";
import type { SampleDto } from "@/lib/domain/types";
import type { RoutineFindings } from "@/lib/domain/findings";
import type { ModelView } from "@/lib/assessment/model-check";
import { findingOf, routineOf } from "@/lib/work-list/figures";
import { findingRecipients, loadAssessments, recordFinding, saveAssessment } from "@/lib/work-list/record";
import type { ServerContext } from "../context";
import type { MailService } from "../mail";
import { LiveAssessor, type LiveResult } from "./assessor";
import { loadLiveLoops } from "./loop-configs";

export interface LiveAssessmentService {
  push(loopId: number, samples: readonly SampleDto[]): void;
  reloadLoop(loopId: number): Promise<void>;
  /** The loop's tracker published a new state: re-issue the verdict if the model check now reads otherwise. */
  recheckModel(loopId: number): void;
  /** The latest finding of a loop (live, or restored from storage). */
  finding(loopId: number): LoopFinding | null;
  readonly assessor: LiveAssessor;
  /** Resolves when every write queued so far is done (tests, shutdown). */
  flush(): Promise<void>;
  stats(): { loops: number; runs: number; writeErrors: number; lastError: string | null };
  stop(): Promise<void>;
}

export interface LiveAssessmentOptions {
  sequelize: Sequelize;
  /** Timer period for due assessments (ms). */
  tickEveryMs?: number;
  /** Wall time allowed per tick (ms), so the event loop is never held long. */
  tickBudgetMs?: number;
  capacity?: number;
  /**
   * Hands each loop's verdict to the loop's tracker, which carries it in the loop's assessment
   * (`LoopAssessment.routine`) for the API, the live summary and the pages (the pipeline wires it).
   */
  onRoutine?: (loopId: number, routine: RoutineFindings) => void;
  /** The loop's current assessment from its tracker: each verdict is cross-checked against its model (lib/assessment/model-check.ts). */
  modelOf?: (loopId: number) => ModelView | null | undefined;
}

export async function startLiveAssessment(ctx: ServerContext, opts: LiveAssessmentOptions): Promise<LiveAssessmentService> {
  const { sequelize } = opts;
  let runs = 0;
  let writeErrors = 0;
  let lastError: string | null = null;
  let tail: Promise<void> = Promise.resolve();
  const tags = new Map<number, string>();

  const write = (r: LiveResult) => {
    tail = tail.then(async () => {
      try {
        await saveAssessment(sequelize, r);
        const outcome = await recordFinding(sequelize, r);
        if (outcome.opened !== null) await notify(r, outcome.opened);
      } catch (e) {
        writeErrors++;
        lastError = e instanceof Error ? e.message : String(e);
        console.error(`[assessment] storing the finding of loop ${r.loopId} failed:`, lastError);
      }
    });
  };

  const notify = async (r: LiveResult, itemId: number) => {
    const mail = ctx.services.get("mail") as MailService | undefined;
    if (!mail || typeof mail.send !== "function") return;
    const to = await findingRecipients(sequelize, r.tenantId);
    if (!to.length) return;
    const tag = tags.get(r.loopId) ?? `loop ${r.loopId}`;
    const d = r.report.diagnosis;
    await mail.send({
      to,
      subject: `Work list: ${tag} — ${findingPhrase({ label: d.label, confidence: d.confidence, needsS: d.needsS ?? null })}`,
      text: [
        `A routine-data finding opened a work-list item for ${tag} (confidence ${d.confidence.toFixed(2)}).`,
        "",
        ...d.evidence.map((l) => `- ${l}`),
        "",
        `${publicOrigin(ctx.config)}/work-list?item=${itemId}`,
        "",
        "Advisory only: any change to the loop follows the site's management of change.",
      ].join("\n"),
      headers: { "X-Rimguard-Tenant": String(r.tenantId) },
    });
  };

  const assessor = new LiveAssessor({
    capacity: opts.capacity,
    now: () => ctx.clock.now(),
    modelOf: opts.modelOf,
    onResult: (r) => {
      runs++;
      opts.onRoutine?.(r.loopId, routineOf(r.report, r.at, r.windowS));
      ctx.io?.to(tenantRoom(r.tenantId)).emit("loop:finding", findingOf(r.loopId, r.at, r.report, r.windowS));
      write(r);
    },
  });

  const { loops } = await loadLiveLoops(sequelize);
  for (const l of loops) {
    assessor.upsertLoop(l);
    tags.set(l.loopId, l.config.tag);
  }
  const siteOf = new Map(loops.map((l) => [l.loopId, l.siteId]));
  for (const s of await loadAssessments(sequelize)) {
    const siteId = siteOf.get(s.loopId);
    if (siteId === undefined || !assessor.has(s.loopId)) continue;
    assessor.restore({ ...s, siteId });
    opts.onRoutine?.(s.loopId, routineOf(s.report, s.at, s.windowS));
  }

  // A tenant's work-list settings changed (the sluggish-tuning multiple): its loops take the new level.
  const onSettings = (tenantId: number) => {
    loadLiveLoops(sequelize)
      .then(({ loops: all }) => {
        for (const l of all) if (l.tenantId === tenantId && assessor.has(l.loopId)) assessor.upsertLoop(l);
      })
      .catch((e: unknown) => console.error(`[assessment] reloading the work-list settings of tenant ${tenantId} failed:`, e instanceof Error ? e.message : String(e)));
  };
  ctx.bus.on("work-list:settings-changed", onSettings);

  const timer = ctx.clock.setInterval(() => {
    try {
      assessor.runDue(opts.tickBudgetMs ?? 15);
    } catch (e) {
      lastError = e instanceof Error ? e.message : String(e);
      console.error("[assessment] an assessment failed:", lastError);
    }
  }, opts.tickEveryMs ?? 250);

  return {
    assessor,
    push: (loopId, samples) => assessor.push(loopId, samples),
    recheckModel: (loopId) => void assessor.recheckModel(loopId),
    async reloadLoop(loopId) {
      const { loops: one } = await loadLiveLoops(sequelize, loopId);
      const l = one[0];
      if (!l) {
        assessor.removeLoop(loopId);
        tags.delete(loopId);
        return;
      }
      assessor.upsertLoop(l);
      tags.set(loopId, l.config.tag);
    },
    finding(loopId) {
      const r = assessor.latestOf(loopId);
      return r ? findingOf(r.loopId, r.at, r.report, r.windowS) : null;
    },
    flush: () => tail,
    stats: () => ({ loops: assessor.size, runs, writeErrors, lastError }),
    async stop() {
      ctx.bus.off("work-list:settings-changed", onSettings);
      timer.cancel();
      await tail;
    },
  };
}
