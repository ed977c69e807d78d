/**
 * What the live assessment service writes (server side, no request context): the latest
 * assessment of a loop, and the work-list item a finding opens or updates. One open item per loop
 * and label (unique index on `work_items(loop_id, open_key)`, migration 0130): a repeated finding
 * updates it (latest figures, confidence, count), never duplicates it. Every finding also updates
 * the latest figures of the loop's other items still open or in work, so an engineer sees the
 * figures after a tuning or maintenance change beside those at open.
 */
import { QueryTypes, type Sequelize, type Transaction } from "sequelize";
import type { LoopAssessmentReport } from "@/lib/assessment/types";
import { opensWorkItem } from "@/lib/domain/findings";
import { figuresOf } from "./figures";

export interface RecordInput {
  loopId: number;
  tenantId: number;
  siteId: number;
  /** Epoch ms. */
  at: number;
  report: LoopAssessmentReport;
  windowSamples: number;
  windowS: number;
}

/** Stores the latest assessment of a loop (one row per loop). */
export async function saveAssessment(sequelize: Sequelize, r: RecordInput): Promise<void> {
  const d = r.report.diagnosis;
  await sequelize.query(
    `INSERT INTO loop_assessments (loop_id, tenant_id, assessed_at, label, confidence, needs_s, window_samples, window_s, report)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)
     ON DUPLICATE KEY UPDATE assessed_at = VALUES(assessed_at), label = VALUES(label), confidence = VALUES(confidence),
       needs_s = VALUES(needs_s), window_samples = VALUES(window_samples), window_s = VALUES(window_s), report = VALUES(report)`,
    { replacements: [r.loopId, r.tenantId, new Date(r.at), d.label, d.confidence, d.needsS ?? null, r.windowSamples, r.windowS, JSON.stringify(r.report)] },
  );
}

export interface StoredAssessment {
  loopId: number;
  tenantId: number;
  at: number;
  windowSamples: number;
  windowS: number;
  report: LoopAssessmentReport;
}

/** Every stored assessment (restored at start), or one tenant's. */
export async function loadAssessments(sequelize: Sequelize, tenantId?: number): Promise<StoredAssessment[]> {
  const rows = await sequelize.query<{ loop_id: number; tenant_id: number; assessed_at: Date; window_samples: number; window_s: number; report: unknown }>(
    `SELECT loop_id, tenant_id, assessed_at, window_samples, window_s, report FROM loop_assessments ${tenantId === undefined ? "" : "WHERE tenant_id = ?"}`,
    { replacements: tenantId === undefined ? [] : [tenantId], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({
    loopId: Number(r.loop_id),
    tenantId: Number(r.tenant_id),
    at: new Date(r.assessed_at).getTime(),
    windowSamples: Number(r.window_samples),
    windowS: Number(r.window_s),
    report: (typeof r.report === "string" ? JSON.parse(r.report) : r.report) as LoopAssessmentReport,
  }));
}

export interface RecordOutcome {
  /** Id of the item the finding opened (null when it updated one or opened none). */
  opened: number | null;
  updated: number | null;
}

async function openItemId(sequelize: Sequelize, loopId: number, label: string, transaction: Transaction): Promise<number | null> {
  const [row] = await sequelize.query<{ id: number }>("SELECT id FROM work_items WHERE loop_id = ? AND open_key = ? FOR UPDATE", {
    replacements: [loopId, label],
    type: QueryTypes.SELECT,
    transaction,
  });
  return row ? Number(row.id) : null;
}

/** Opens or updates the work item of a finding; returns what happened. */
export async function recordFinding(sequelize: Sequelize, r: RecordInput): Promise<RecordOutcome> {
  const figures = JSON.stringify(figuresOf(r.report, r.at));
  const d = r.report.diagnosis;
  const at = new Date(r.at);
  return sequelize.transaction(async (transaction) => {
    await sequelize.query("UPDATE work_items SET figures_latest = ?, updated_at = ? WHERE loop_id = ? AND status <> 'closed'", {
      replacements: [figures, at, r.loopId],
      transaction,
    });
    if (!opensWorkItem(d)) return { opened: null, updated: null };
    const existing = await openItemId(sequelize, r.loopId, d.label, transaction);
    if (existing !== null) {
      await sequelize.query(
        "UPDATE work_items SET confidence = ?, last_seen_at = ?, seen_count = seen_count + 1, evidence = ? WHERE id = ?",
        { replacements: [d.confidence, at, JSON.stringify(d.evidence), existing], transaction },
      );
      return { opened: null, updated: existing };
    }
    const [insertId] = (await sequelize.query(
      `INSERT INTO work_items (tenant_id, site_id, loop_id, label, status, confidence, opened_at, last_seen_at, figures_at_open, figures_latest, evidence, created_at, updated_at)
       VALUES (?, ?, ?, ?, 'open', ?, ?, ?, ?, ?, ?, ?, ?)`,
      { replacements: [r.tenantId, r.siteId, r.loopId, d.label, d.confidence, at, at, figures, figures, JSON.stringify(d.evidence), at, at], type: QueryTypes.INSERT, transaction },
    )) as unknown as [number, number];
    const id = Number(insertId);
    await sequelize.query(
      "INSERT INTO work_item_events (tenant_id, work_item_id, user_id, kind, from_status, to_status, note, at) VALUES (?, ?, NULL, 'opened', NULL, 'open', ?, ?)",
      { replacements: [r.tenantId, id, `${d.evidence[0] ?? d.label} (confidence ${d.confidence.toFixed(2)})`, at], transaction },
    );
    return { opened: id, updated: null };
  });
}

/** Recipients of a tenant's enabled finding rules (notification_rules.kind = 'finding'). */
export async function findingRecipients(sequelize: Sequelize, tenantId: number): Promise<string[]> {
  const rows = await sequelize.query<{ recipients: unknown }>("SELECT recipients FROM notification_rules WHERE tenant_id = ? AND enabled = 1 AND kind = 'finding'", {
    replacements: [tenantId],
    type: QueryTypes.SELECT,
  });
  const out = new Set<string>();
  for (const r of rows) {
    const list = typeof r.recipients === "string" ? (JSON.parse(r.recipients) as unknown) : r.recipients;
    if (Array.isArray(list)) for (const a of list) if (typeof a === "string") out.add(a);
  }
  return [...out];
}
