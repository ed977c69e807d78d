/**
 * The rim forecast's parameter drift (./drift-source.ts) with what a checkpoint needs to resume
 * it exactly (docs/architecture.md §6, "Checkpoints"): a base, the drift's whole state as an image
 * (./state-image.ts: every number and typed array it holds, so a change to the drift fit's sums
 * or blocks needs no change here), and a journal of the samples pushed since, replayed on
 * restore. A base is large (the per-block sums of the forecast window) and changes little between
 * two (closed blocks never change), a journal entry is 7 + na + nb numbers: a new base is taken
 * once a memory's worth of samples is journalled, and the store (lib/data/drift-checkpoints.ts)
 * writes only the parts of a base that changed. The replay runs the same code on the same inputs,
 * so the restored drift is the uninterrupted one, bit for bit.
 */
import { RadiusDrift, type RadiusDriftOptions } from "./drift-source";
import { restoreImage, takeImage, type ImageObject } from "./state-image";

/** Bumped when the meaning of a drift checkpoint changes (a mismatch drops it: the forecast falls back). */
export const DRIFT_CHECKPOINT_FORMAT = 1;

/** The drift part of a tracker's checkpoint. */
export interface DriftCheckpoint {
  format: number;
  /** The drift's options but the controller, as JSON: a restore into other options is refused. */
  options: string;
  /** The tracker's estimation samples when taken: a restore with a main checkpoint of another moment is refused. */
  stamp: number;
  /** Which base the journal continues (unique in the process). */
  generation: number;
  /** The drift's state where the journal starts; absent: the base of this generation, handed out before. */
  base?: ImageObject;
  /** Numbers per journal entry: u, y, r, mode (0 closed, 1 open, 2 skip), t, solved, ready, theta. */
  width: number;
  journal: Float64Array;
}

/** RadiusDrift's fields that are configuration, not state (compared through `options` instead). */
const CONFIG_FIELDS = ["o"];
const MODES = ["closed", "open", "skip"] as const;
let generations = 0;

/** JSON with sorted keys (the same options give the same text whatever the order they were built in). */
function stableJson(v: unknown): string {
  if (Array.isArray(v)) return `[${v.map(stableJson).join(",")}]`;
  if (v !== null && typeof v === "object") {
    const o = v as Record<string, unknown>;
    return `{${Object.keys(o).filter((k) => o[k] !== undefined).sort().map((k) => `${JSON.stringify(k)}:${stableJson(o[k])}`).join(",")}}`;
  }
  return JSON.stringify(v) ?? "null";
}

export class RecordedDrift {
  private inner: RadiusDrift;
  private readonly width: number;
  private readonly optionsKey: string;
  /** Entries after which a new base is due (one memory of samples), and after which the journal is dropped when no checkpoint takes one. */
  private readonly baseEvery: number;
  private readonly cap: number;
  private journal: Float64Array;
  private entries = 0;
  private generation = ++generations;

  constructor(
    private readonly o: RadiusDriftOptions,
    /** The tracker's estimation samples (a checkpoint's stamp). */
    private readonly stamp: () => number,
  ) {
    this.inner = new RadiusDrift(o);
    this.width = 7 + o.na + o.nb;
    const { controller: _controller, ...rest } = o;
    this.optionsKey = stableJson(rest);
    this.baseEvery = Math.max(1, Math.round(o.memoryS / o.T));
    this.cap = 4 * this.baseEvery;
    this.journal = new Float64Array(this.width * 16);
  }

  push(u: number, y: number, r: number, mode: (typeof MODES)[number], t: number, theta: Float64Array, solved: boolean, ready: boolean): void {
    this.inner.push(u, y, r, mode, t, theta, solved, ready);
    if (this.entries >= this.cap) this.lose();
    const w = this.width;
    if ((this.entries + 1) * w > this.journal.length) {
      const grown = new Float64Array(Math.min(this.cap * w, 2 * this.journal.length));
      grown.set(this.journal.subarray(0, this.entries * w));
      this.journal = grown;
    }
    const j = this.journal;
    const o = this.entries * w;
    j[o] = u;
    j[o + 1] = y;
    j[o + 2] = r;
    j[o + 3] = MODES.indexOf(mode);
    j[o + 4] = t;
    j[o + 5] = solved ? 1 : 0;
    j[o + 6] = ready ? 1 : 0;
    for (let i = 0; i < w - 7; i++) j[o + 7 + i] = theta[i]!;
    this.entries++;
  }

  forecast(...a: Parameters<RadiusDrift["forecast"]>): ReturnType<RadiusDrift["forecast"]> {
    return this.inner.forecast(...a);
  }

  reset(): void {
    this.inner.reset();
    this.lose();
  }

  /** The journal no longer continues the last base handed out. */
  private lose(): void {
    this.entries = 0;
    this.generation = ++generations;
  }

  /**
   * The drift part of a checkpoint, now: with a new base when the caller's stored base is
   * not this journal's (`stored`: the generation it last stored, null: none) or a memory's worth
   * of samples is journalled; otherwise the journal since the base of `stored` (which the cap
   * keeps to 4 memories of samples: beyond it the journal is lost and a base is needed).
   * @throws ImageShapeError when the drift holds a value an image cannot copy.
   */
  checkpoint(stored: number | null): DriftCheckpoint;
  /** With `mayBase` false (the caller is out of time for a base): the journal even when a base is due, or null when a base is needed. */
  checkpoint(stored: number | null, mayBase: false): DriftCheckpoint | null;
  checkpoint(stored: number | null, mayBase = true): DriftCheckpoint | null {
    const head = { format: DRIFT_CHECKPOINT_FORMAT, options: this.optionsKey, stamp: this.stamp(), width: this.width };
    if (stored === this.generation && (this.entries < this.baseEvery || !mayBase)) {
      return { ...head, generation: this.generation, journal: this.journal.slice(0, this.entries * this.width) };
    }
    if (!mayBase) return null;
    const base = takeImage(this.inner, CONFIG_FIELDS);
    this.lose();
    return { ...head, generation: this.generation, base, journal: new Float64Array(0) };
  }

  /**
   * Resume from `cp`, taken with the checkpoint the tracker was just restored from: its base into
   * a fresh drift, then its journal replayed. Returns why it was refused (nothing touched), or null.
   */
  restore(cp: DriftCheckpoint): string | null {
    try {
      const wrong = this.resume(cp);
      if (typeof wrong === "string") return wrong;
      this.inner = wrong;
      this.lose();
      return null;
    } catch (e) {
      return `drift checkpoint does not fit: ${(e as Error).message}`;
    }
  }

  private resume(cp: DriftCheckpoint): RadiusDrift | string {
    const stamp = this.stamp();
    if (typeof cp !== "object" || cp === null) return "drift checkpoint is not an object";
    if (cp.format !== DRIFT_CHECKPOINT_FORMAT) return `drift checkpoint format ${String(cp.format)}, this server reads ${DRIFT_CHECKPOINT_FORMAT}`;
    if (cp.options !== this.optionsKey) return "drift checkpoint made for other drift options";
    if (cp.stamp !== stamp) return `drift checkpoint taken at estimation sample ${cp.stamp}, the tracker's checkpoint at ${stamp}`;
    if (!cp.base) return "drift checkpoint without its base state";
    const w = this.width;
    if (cp.width !== w || !(cp.journal instanceof Float64Array) || cp.journal.length % w !== 0) return "drift checkpoint journal of another shape";
    const fresh = new RadiusDrift(this.o);
    restoreImage(fresh, cp.base, CONFIG_FIELDS);
    const j = cp.journal;
    for (let o = 0; o < j.length; o += w) {
      const mode = MODES[j[o + 3]!];
      if (!mode) return "drift checkpoint journal holds an unknown mode";
      fresh.push(j[o]!, j[o + 1]!, j[o + 2]!, mode, j[o + 4]!, j.slice(o + 7, o + w), j[o + 5] === 1, j[o + 6] === 1);
    }
    return fresh;
  }
}
