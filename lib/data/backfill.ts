/**
 * The history_backfills table (migration 0120) and the spans a new backfill of a loop must not
 * write into: earlier backfills (widened to whole minutes, since a minute row is shared by every
 * sample of that minute) and live history (from the first minute that no backfill wrote).
 */
import { QueryTypes, type Sequelize } from "sequelize";

import type { BackfillRow, BackfillStatus } from "@/lib/domain/backfill";
export type { BackfillRow, BackfillStatus };

export const MINUTE_MS = 60_000;
const floorMinute = (t: number) => Math.floor(t / MINUTE_MS) * MINUTE_MS;

export async function insertBackfill(
  sequelize: Sequelize,
  r: { tenantId: number; loopId: number; userId: number | null; fileName: string },
): Promise<number> {
  const [id] = await sequelize.query(
    "INSERT INTO history_backfills (tenant_id, loop_id, user_id, file_name, status, started_at) VALUES (?, ?, ?, ?, 'running', NOW(3))",
    {
      replacements: [r.tenantId, r.loopId, r.userId, r.fileName.slice(0, 255)],
      type: QueryTypes.INSERT,
    },
  );
  return Number(id);
}

export async function updateBackfill(
  sequelize: Sequelize,
  id: number,
  r: Pick<BackfillRow, "status" | "fromT" | "toT" | "bytes" | "accepted" | "rejected" | "minuteOnly" | "trained" | "summary">,
): Promise<void> {
  await sequelize.query(
    `UPDATE history_backfills SET status = ?, from_t = ?, to_t = ?, bytes = ?, accepted = ?, rejected = ?, minute_only = ?, trained = ?, summary = ?,
       finished_at = IF(? = 'running', NULL, NOW(3)) WHERE id = ?`,
    {
      replacements: [
        r.status,
        r.fromT,
        r.toT,
        r.bytes,
        r.accepted,
        r.rejected,
        r.minuteOnly,
        r.trained,
        JSON.stringify(r.summary),
        r.status,
        id,
      ],
    },
  );
}

/** A backfill left `running` by a process that ended: it stopped where its span ends. */
export async function closeAbandonedBackfills(sequelize: Sequelize): Promise<void> {
  await sequelize.query(
    "UPDATE history_backfills SET status = 'failed', finished_at = NOW(3) WHERE status = 'running'",
  );
}

export async function listBackfills(
  sequelize: Sequelize,
  tenantId: number,
  loopId: number,
): Promise<BackfillRow[]> {
  const rows = await sequelize.query<Record<string, unknown>>(
    `SELECT id, loop_id, user_id, file_name, status, from_t, to_t, bytes, accepted, rejected, minute_only, trained, summary, started_at, finished_at
       FROM history_backfills WHERE tenant_id = ? AND loop_id = ? ORDER BY id DESC LIMIT 100`,
    { replacements: [tenantId, loopId], type: QueryTypes.SELECT },
  );
  const n = (v: unknown) => (v === null || v === undefined ? null : Number(v));
  return rows.map((r) => ({
    id: Number(r.id),
    loopId: Number(r.loop_id),
    userId: n(r.user_id),
    fileName: String(r.file_name),
    status: r.status as BackfillStatus,
    fromT: n(r.from_t),
    toT: n(r.to_t),
    bytes: Number(r.bytes),
    accepted: Number(r.accepted),
    rejected: Number(r.rejected),
    minuteOnly: Number(r.minute_only),
    trained: Boolean(r.trained),
    summary: typeof r.summary === "string" ? (JSON.parse(r.summary) as unknown) : null,
    startedAt: new Date(r.started_at as string).toISOString(),
    finishedAt: r.finished_at ? new Date(r.finished_at as string).toISOString() : null,
  }));
}

export interface BlockedSpans {
  /** [from, to) in epoch ms, whole minutes, sorted by start. */
  spans: { from: number; to: number; backfillId: number }[];
  /** Start of the first minute of live history (no backfill wrote it), or null. */
  liveFrom: number | null;
}

/** What a new backfill of `loopId` must leave alone (see the header). */
export async function blockedSpans(
  sequelize: Sequelize,
  loopId: number,
  exceptId: number,
): Promise<BlockedSpans> {
  const rows = await sequelize.query<{
    id: number;
    from_t: number | string;
    to_t: number | string;
  }>(
    "SELECT id, from_t, to_t FROM history_backfills WHERE loop_id = ? AND id <> ? AND from_t IS NOT NULL AND to_t IS NOT NULL ORDER BY from_t",
    { replacements: [loopId, exceptId], type: QueryTypes.SELECT },
  );
  const spans = rows.map((r) => ({
    from: floorMinute(Number(r.from_t)),
    to: floorMinute(Number(r.to_t)) + MINUTE_MS,
    backfillId: Number(r.id),
  }));
  const notBackfilled = spans.map(() => "NOT (t >= ? AND t < ?)").join(" AND ");
  const args = spans.flatMap((s) => [s.from, s.to]);
  let liveFrom: number | null = null;
  for (const table of ["samples_1m", "samples_1s", "pole_snapshots"]) {
    const [row] = await sequelize.query<{ t: number | string | null }>(
      `SELECT MIN(t) AS t FROM ${table} WHERE loop_id = ?${spans.length ? ` AND ${notBackfilled}` : ""}`,
      {
        replacements: [loopId, ...args],
        type: QueryTypes.SELECT,
      },
    );
    if (row?.t !== null && row?.t !== undefined)
      liveFrom = Math.min(liveFrom ?? Infinity, floorMinute(Number(row.t)));
  }
  return { spans, liveFrom };
}
