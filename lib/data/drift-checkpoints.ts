/**
 * The rim forecast's drift part of the estimator checkpoints (drift_checkpoints and its
 * content-addressed drift_checkpoint_chunks; the form is server/tracking/drift-chunks.ts and
 * docs/architecture.md §6, "Checkpoints"). A write adds the new chunks, then replaces the header,
 * then deletes the chunks it no longer names, so a header always finds its chunks, whatever step
 * a failure stops at.
 */
import { QueryTypes, type Sequelize } from "sequelize";

/** One loop's write (what the chunk ledger planned). */
export interface StoredDriftWrite {
  loopId: number;
  tenantId: number;
  header: string;
  put: readonly { hash: string; data: Buffer }[];
  drop: readonly string[];
}

/** Rows per INSERT of chunks, and bytes (an upper bound on the statement: well under max_allowed_packet). */
const CHUNKS_PER_STATEMENT = 500;
const BYTES_PER_STATEMENT = 4 << 20;

/** Every write, in three statements' worth (chunks, headers, deletions) per call. */
export async function saveDriftCheckpoints(sequelize: Sequelize, writes: readonly StoredDriftWrite[], now: number): Promise<void> {
  if (writes.length === 0) return;
  const at = new Date(now).toISOString().slice(0, 23).replace("T", " ");
  let rows: string[] = [];
  let bytes = 0;
  const flush = async () => {
    if (rows.length) await sequelize.query(`INSERT IGNORE INTO drift_checkpoint_chunks (loop_id, hash, data) VALUES ${rows.join(",")}`);
    rows = [];
    bytes = 0;
  };
  for (const w of writes) {
    for (const p of w.put) {
      if (rows.length >= CHUNKS_PER_STATEMENT || bytes + 2 * p.data.length > BYTES_PER_STATEMENT) await flush();
      rows.push(`(${Number(w.loopId)},${sequelize.escape(p.hash)},X'${p.data.toString("hex")}')`);
      bytes += 2 * p.data.length + 64;
    }
  }
  await flush();
  const headers = writes.map((w) => `(${Number(w.loopId)},${Number(w.tenantId)},${sequelize.escape(w.header)},'${at}')`);
  await sequelize.query(
    `INSERT INTO drift_checkpoints (loop_id, tenant_id, header, updated_at) VALUES ${headers.join(",")}
     ON DUPLICATE KEY UPDATE tenant_id = VALUES(tenant_id), header = VALUES(header), updated_at = VALUES(updated_at)`,
  );
  const gone = writes.flatMap((w) => w.drop.map((h) => `(${Number(w.loopId)},${sequelize.escape(h)})`));
  for (let i = 0; i < gone.length; i += CHUNKS_PER_STATEMENT) {
    await sequelize.query(`DELETE FROM drift_checkpoint_chunks WHERE (loop_id, hash) IN (${gone.slice(i, i + CHUNKS_PER_STATEMENT).join(",")})`);
  }
}

/** The hashes of every stored chunk, per loop (what a new ledger starts from). */
export async function loadDriftChunkHashes(sequelize: Sequelize): Promise<Map<number, string[]>> {
  const rows = await sequelize.query<{ loop_id: number; hash: Buffer | string }>("SELECT loop_id, hash FROM drift_checkpoint_chunks", { type: QueryTypes.SELECT });
  const out = new Map<number, string[]>();
  for (const r of rows) {
    const id = Number(r.loop_id);
    const list = out.get(id) ?? [];
    list.push(String(r.hash));
    out.set(id, list);
  }
  return out;
}

/** A loop's stored header and its chunks (null: none stored). */
export async function loadDriftCheckpoint(sequelize: Sequelize, loopId: number): Promise<{ header: string; chunks: Map<string, Buffer> } | null> {
  const [head] = await sequelize.query<{ header: string }>("SELECT header FROM drift_checkpoints WHERE loop_id = ?", { replacements: [loopId], type: QueryTypes.SELECT });
  if (!head) return null;
  const rows = await sequelize.query<{ hash: Buffer | string; data: Buffer }>("SELECT hash, data FROM drift_checkpoint_chunks WHERE loop_id = ?", { replacements: [loopId], type: QueryTypes.SELECT });
  return { header: String(head.header), chunks: new Map(rows.map((r) => [String(r.hash), Buffer.from(r.data)])) };
}
