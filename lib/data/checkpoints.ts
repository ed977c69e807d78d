/**
 * Estimator checkpoints (estimator_checkpoints) and the last tracker state (loop_states), so a
 * restarted server resumes tracking where it stopped instead of learning again.
 */
import { QueryTypes, type Sequelize } from "sequelize";
import type { LoopStateDto } from "@/lib/domain/types";

export interface StoredCheckpoint {
  loopId: number;
  tenantId: number;
  state: unknown;
}

/** Upsert checkpoints in one statement per 200 loops. Returns how many were written. */
export async function saveCheckpoints(sequelize: Sequelize, entries: readonly { loopId: number; tenantId: number; state: unknown }[], now: number): Promise<number> {
  let written = 0;
  const at = new Date(now).toISOString().slice(0, 23).replace("T", " ");
  for (let i = 0; i < entries.length; i += 200) {
    const part = entries.slice(i, i + 200);
    const values: string[] = [];
    for (const e of part) {
      let json: string;
      try {
        json = JSON.stringify(e.state, (_k, v: unknown) => (typeof v === "number" && !Number.isFinite(v) ? null : v));
      } catch {
        continue;
      }
      values.push(`(${Number(e.loopId)},${Number(e.tenantId)},${sequelize.escape(json)},1,'${at}')`);
    }
    if (values.length === 0) continue;
    await sequelize.query(
      `INSERT INTO estimator_checkpoints (loop_id, tenant_id, state, version, updated_at) VALUES ${values.join(",")}
       ON DUPLICATE KEY UPDATE tenant_id = VALUES(tenant_id), state = VALUES(state), version = version + 1, updated_at = VALUES(updated_at)`,
    );
    written += values.length;
  }
  return written;
}

/** Every stored checkpoint whose JSON parses (a corrupt one is skipped and reported). */
export async function loadCheckpoints(sequelize: Sequelize): Promise<{ entries: StoredCheckpoint[]; corrupt: number[] }> {
  const rows = await sequelize.query<{ loop_id: number; tenant_id: number; state: string }>(
    "SELECT loop_id, tenant_id, state FROM estimator_checkpoints",
    { type: QueryTypes.SELECT },
  );
  const entries: StoredCheckpoint[] = [];
  const corrupt: number[] = [];
  for (const r of rows) {
    try {
      entries.push({ loopId: Number(r.loop_id), tenantId: Number(r.tenant_id), state: JSON.parse(r.state) as unknown });
    } catch {
      corrupt.push(Number(r.loop_id));
    }
  }
  return { entries, corrupt };
}

/** The last stored state of each loop (for the first screen after a restart and ingest ordering). */
export async function loadLoopStates(sequelize: Sequelize): Promise<LoopStateDto[]> {
  const rows = await sequelize.query<{ latest: string | LoopStateDto }>("SELECT latest FROM loop_states", { type: QueryTypes.SELECT });
  const out: LoopStateDto[] = [];
  for (const r of rows) {
    try {
      out.push(typeof r.latest === "string" ? (JSON.parse(r.latest) as LoopStateDto) : r.latest);
    } catch {
      /* a corrupt row is ignored: the tracker will publish a fresh state */
    }
  }
  return out;
}
