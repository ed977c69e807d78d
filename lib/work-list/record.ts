/**
 * What the live assessment service writes (server side, no request context): the latest
 * assessment of a loop, and the work-list item a finding opens or updates. One open item per loop
 * and label (unique index on `work_items(loop_id, open_key)`, migration 0130): a repeated finding
 * updates it (latest figures, confidence, count), never duplicates it. Every finding also updates
 * the latest figures of the loop's other items still open or in work, so an engineer sees the
 * figures after a tuning or maintenance change beside those at open. SQL: lib/data/work-list.ts.
 */
import type { Sequelize } from "sequelize";
import {
  inWorkListTransaction,
  insertOpenItem,
  lockOpenItem,
  selectAllAssessments,
  selectFindingRecipientLists,
  touchOpenItem,
  updateOpenItemFigures,
  upsertAssessment,
} from "@/lib/data/work-list";
import { opensWorkItem, type LiveAssessmentReport } from "@/lib/domain/findings";
import { figuresOf } from "./figures";

export interface RecordInput {
  loopId: number;
  tenantId: number;
  siteId: number;
  /** Epoch ms. */
  at: number;
  /** With the site's period group (server/assessment/site-groups.ts): a shared period turns a sticking valve into a shared oscillation. */
  report: LiveAssessmentReport;
  windowSamples: number;
  windowS: number;
}

/** Stores the latest assessment of a loop (one row per loop). */
export async function saveAssessment(sequelize: Sequelize, r: RecordInput): Promise<void> {
  const d = r.report.diagnosis;
  await upsertAssessment(sequelize, { ...r, label: d.label, confidence: d.confidence, needsS: d.needsS ?? null });
}

export interface StoredAssessment {
  loopId: number;
  tenantId: number;
  at: number;
  windowSamples: number;
  windowS: number;
  report: LiveAssessmentReport;
}

/** Every stored assessment (restored at start), or one tenant's. */
export async function loadAssessments(sequelize: Sequelize, tenantId?: number): Promise<StoredAssessment[]> {
  const rows = await selectAllAssessments(sequelize, tenantId);
  return rows.map((r) => ({
    loopId: Number(r.loop_id),
    tenantId: Number(r.tenant_id),
    at: new Date(r.assessed_at).getTime(),
    windowSamples: Number(r.window_samples),
    windowS: Number(r.window_s),
    report: (typeof r.report === "string" ? JSON.parse(r.report) : r.report) as LiveAssessmentReport,
  }));
}

export interface RecordOutcome {
  /** Id of the item the finding opened (null when it updated one or opened none). */
  opened: number | null;
  updated: number | null;
}

/** Opens or updates the work item of a finding; returns what happened. */
export async function recordFinding(sequelize: Sequelize, r: RecordInput): Promise<RecordOutcome> {
  const figures = figuresOf(r.report, r.at);
  const d = r.report.diagnosis;
  const at = new Date(r.at);
  return inWorkListTransaction(async (transaction) => {
    await updateOpenItemFigures(sequelize, r.loopId, figures, at, transaction);
    if (!opensWorkItem(d)) return { opened: null, updated: null };
    const existing = await lockOpenItem(sequelize, r.loopId, d.label, transaction);
    if (existing !== null) {
      await touchOpenItem(sequelize, existing, { confidence: d.confidence, at, evidence: d.evidence }, transaction);
      return { opened: null, updated: existing };
    }
    const note = `${d.evidence[0] ?? d.label} (confidence ${d.confidence.toFixed(2)})`;
    const id = await insertOpenItem(
      sequelize,
      { tenantId: r.tenantId, siteId: r.siteId, loopId: r.loopId, label: d.label, confidence: d.confidence, at, figures, evidence: d.evidence, note },
      transaction,
    );
    return { opened: id, updated: null };
  }, sequelize);
}

/** Recipients of a tenant's enabled finding rules (notification_rules.kind = 'finding'). */
export async function findingRecipients(sequelize: Sequelize, tenantId: number): Promise<string[]> {
  const out = new Set<string>();
  for (const list of await selectFindingRecipientLists(sequelize, tenantId)) {
    if (Array.isArray(list)) for (const a of list) if (typeof a === "string") out.add(a);
  }
  return [...out];
}
