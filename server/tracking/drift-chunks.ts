/**
 * The stored form of a loop's drift checkpoint (./drift-checkpoint.ts;
 * docs/architecture.md §6, "Checkpoints"): content-addressed chunks. Every typed array of the drift's
 * image and of the journal is cut into chunks of CHUNK_BYTES, each stored under the hash of its
 * bytes (SHA-256, its first 22 base64url characters: 132 bits); the image's JSON, its arrays replaced by their
 * chunks' hashes, is a chunk too; a small header names the base image's chunk and the journal's.
 * A chunk already stored for the loop is not written again: a closed block of sums, the far past
 * of a ring of kept samples, never change, so a new base writes what changed since the last one,
 * and a checkpoint between bases writes the header and the journal's last chunk. Every chunk read
 * back is checked against its hash. Numbers are stored in the machine's byte order (little-endian
 * on every platform the server runs on); a non-finite number in the JSON as {"$n": "NaN"}.
 */
import { createHash } from "node:crypto";
import { isNumeric, NUMERIC_TYPES, type Image, type ImageObject, type Numeric } from "./state-image";
import type { DriftCheckpoint } from "./drift-checkpoint";

/** Bytes per chunk: small enough that a ring buffer's or a journal's new entries rewrite little, large enough that the image's list of chunks stays short. */
export const CHUNK_BYTES = 2048;
/** Arrays up to this many bytes stay inline in the JSON (base64). */
const INLINE_BYTES = 256;

export function chunkHash(data: Uint8Array): string {
  return createHash("sha256").update(data).digest("base64url").slice(0, 22);
}

export class DriftChunkError extends Error {}

type ChunkSink = Map<string, Buffer>;

/** JSON of `value`, its typed arrays cut into chunks added to `sink`, non-finite numbers tagged. */
function toJson(value: unknown, sink: ChunkSink): string {
  return JSON.stringify(value, (_k, v: unknown) => {
    if (typeof v === "number" && !Number.isFinite(v)) return { $n: String(v) };
    if (!isNumeric(v)) return v;
    const bytes = Buffer.from(v.buffer, v.byteOffset, v.byteLength);
    if (bytes.length <= INLINE_BYTES) return { $ta: v.constructor.name, b: bytes.toString("base64") };
    const c: string[] = [];
    for (let o = 0; o < bytes.length; o += CHUNK_BYTES) {
      const part = Buffer.from(bytes.subarray(o, o + CHUNK_BYTES));
      const h = chunkHash(part);
      sink.set(h, part);
      c.push(h);
    }
    return { $ta: v.constructor.name, n: v.length, c };
  });
}

/** `toJson` back; `chunk` returns a chunk's verified bytes. @throws DriftChunkError on a malformed or missing part. */
function fromJson(text: string, chunk: (hash: string) => Buffer): unknown {
  return JSON.parse(text, (_k, v: unknown) => {
    if (typeof v !== "object" || v === null || Array.isArray(v)) return v;
    const o = v as { $n?: unknown; $ta?: unknown; b?: unknown; n?: unknown; c?: unknown };
    if (o.$n !== undefined) return Number(o.$n as string);
    if (o.$ta === undefined) return v;
    const C = NUMERIC_TYPES[o.$ta as keyof typeof NUMERIC_TYPES];
    if (!C) throw new DriftChunkError(`unknown array type ${String(o.$ta)}`);
    const bytes = typeof o.b === "string" ? Buffer.from(o.b, "base64") : Array.isArray(o.c) ? Buffer.concat(o.c.map((h) => chunk(String(h)))) : null;
    if (!bytes || bytes.length % C.BYTES_PER_ELEMENT !== 0 || (o.n !== undefined && bytes.length !== Number(o.n) * C.BYTES_PER_ELEMENT)) {
      throw new DriftChunkError(`an array of ${String(o.$ta)} has ${bytes?.length ?? 0} bytes`);
    }
    const out: Numeric = new C(bytes.length / C.BYTES_PER_ELEMENT);
    new Uint8Array(out.buffer).set(bytes);
    return out;
  });
}

/** Every chunk hash a JSON made by `toJson` names. */
function chunkRefs(text: string): string[] {
  const out: string[] = [];
  JSON.parse(text, (_k, v: unknown) => {
    const c = (v as { $ta?: unknown; c?: unknown } | null)?.c;
    if (v !== null && typeof v === "object" && (v as { $ta?: unknown }).$ta !== undefined && Array.isArray(c)) out.push(...c.map(String));
    return v;
  });
  return out;
}

/** The header's fields (the journal's array as `toJson` wrote it). */
interface Header extends Omit<DriftCheckpoint, "base" | "journal"> {
  base: string;
  journal: unknown;
}

/** One loop's write: the header, the chunks to add, the stored ones no longer named. */
export interface DriftWrite {
  loopId: number;
  tenantId: number;
  header: string;
  put: { hash: string; data: Buffer }[];
  drop: string[];
  generation: number;
  base: string;
  baseRefs: string[];
}

interface LoopLedger {
  generation: number | null;
  base: string | null;
  baseRefs: string[];
  /** Chunks known stored, and ones whose write failed (maybe stored: deleted once unnamed, never counted on). */
  stored: Set<string>;
  maybe: Set<string>;
}

/**
 * What has been stored for each loop, and what the next drift checkpoint writes (module doc).
 * `plan` makes a write, `committed` / `failed` record its outcome.
 */
export class DriftChunkLedger {
  private readonly loops = new Map<number, LoopLedger>();

  private loop(loopId: number): LoopLedger {
    let l = this.loops.get(loopId);
    if (!l) this.loops.set(loopId, (l = { generation: null, base: null, baseRefs: [], stored: new Set(), maybe: new Set() }));
    return l;
  }

  /** The generation of the base last stored for the loop (null: none this process knows of). */
  generation(loopId: number): number | null {
    return this.loops.get(loopId)?.generation ?? null;
  }

  /** Chunks found stored at start (all of them are dropped once no header names them). */
  know(loopId: number, hashes: Iterable<string>): void {
    const l = this.loop(loopId);
    for (const h of hashes) l.stored.add(h);
  }

  /** The write of `cp` (taken with `generation(loopId)` as its caller's stored one). */
  plan(loopId: number, tenantId: number, cp: DriftCheckpoint): DriftWrite {
    const l = this.loop(loopId);
    const sink: ChunkSink = new Map();
    let base = l.base;
    let baseRefs = l.baseRefs;
    if (cp.base) {
      const text = Buffer.from(toJson(cp.base, sink));
      base = chunkHash(text);
      baseRefs = [...sink.keys()];
      sink.set(base, text);
    } else if (cp.generation !== l.generation || base === null) {
      throw new DriftChunkError(`drift checkpoint of loop ${loopId} continues a base that was not stored`);
    }
    const { base: _b, journal, ...rest } = cp;
    const header = toJson({ ...rest, base, journal } satisfies Header, sink);
    const named = new Set([base, ...baseRefs, ...sink.keys()]);
    const put = [...sink].filter(([h]) => !l.stored.has(h)).map(([hash, data]) => ({ hash, data }));
    const drop = [...l.stored, ...l.maybe].filter((h) => !named.has(h));
    return { loopId, tenantId, header, put, drop, generation: cp.generation, base, baseRefs };
  }

  committed(w: DriftWrite): void {
    const l = this.loop(w.loopId);
    for (const p of w.put) {
      l.stored.add(p.hash);
      l.maybe.delete(p.hash);
    }
    for (const h of w.drop) {
      l.stored.delete(h);
      l.maybe.delete(h);
    }
    l.generation = w.generation;
    l.base = w.base;
    l.baseRefs = w.baseRefs;
  }

  failed(w: DriftWrite): void {
    const l = this.loop(w.loopId);
    for (const p of w.put) if (!l.stored.has(p.hash)) l.maybe.add(p.hash);
    // The deletions may have run in part: such a chunk is no longer counted on as stored (a later
    // header that names it writes it again), and is still deleted once unnamed.
    for (const h of w.drop) if (l.stored.delete(h)) l.maybe.add(h);
  }

  forget(loopId: number): void {
    this.loops.delete(loopId);
  }
}

/** Bytes a write sends: the header and the new chunks. */
export function writeBytes(w: DriftWrite): number {
  return Buffer.byteLength(w.header) + w.put.reduce((s, p) => s + p.data.length, 0);
}

/**
 * A stored drift checkpoint back from its header and the loop's chunks.
 * @throws DriftChunkError (a missing or corrupt chunk, a malformed header).
 */
export function decodeDrift(header: string, chunks: ReadonlyMap<string, Uint8Array>): DriftCheckpoint {
  const chunk = (h: string): Buffer => {
    const data = chunks.get(h);
    if (!data) throw new DriftChunkError(`chunk ${h} is missing`);
    if (chunkHash(data) !== h) throw new DriftChunkError(`chunk ${h} does not match its hash (corrupt)`);
    return Buffer.from(data);
  };
  let parsed: Header;
  try {
    parsed = fromJson(header, chunk) as Header;
  } catch (e) {
    throw e instanceof DriftChunkError ? e : new DriftChunkError(`header: ${(e as Error).message}`);
  }
  if (typeof parsed !== "object" || parsed === null || typeof parsed.base !== "string") throw new DriftChunkError("header is malformed");
  const base = fromJson(chunk(parsed.base).toString("utf8"), chunk) as Image;
  if (typeof base !== "object" || base === null || Array.isArray(base) || isNumeric(base)) throw new DriftChunkError("base image is malformed");
  if (!(parsed.journal instanceof Float64Array)) throw new DriftChunkError("journal is malformed");
  return { ...parsed, base: base as ImageObject, journal: parsed.journal };
}

/** The chunks a stored header names through its journal and base image (for tests and tools). */
export function headerRefs(header: string, chunks: ReadonlyMap<string, Uint8Array>): string[] {
  const base = (JSON.parse(header) as { base: string }).base;
  const text = chunks.get(base);
  return [base, ...chunkRefs(header), ...(text ? chunkRefs(Buffer.from(text).toString("utf8")) : [])];
}
