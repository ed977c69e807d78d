/**
 * Per-loop window of good samples for the routine assessment: a ring of at most `capacity`
 * samples. Long windows are decimated by block means (PV, MV; SP and mode of the block's last
 * sample), so memory is bounded whatever the loop's time scale: `stride` incoming samples make
 * one stored sample. With stride 1 the stored samples are exactly the ones pushed, so the live
 * assessment sees what an export of the same samples would give the offline command.
 */
import type { AssessMode, AssessSample } from "@/lib/assessment";

/** Values stored per sample in `data`: t, sp, pv, mv side by side (one cache line touched per push, not four). */
const FIELDS = 4;

export class AssessRing {
  private readonly data: Float64Array;
  private readonly mode: Uint8Array;
  private head = 0;
  private count = 0;
  // Block being averaged (stride > 1).
  private blockN = 0;
  private blockT = 0;
  private blockPv = 0;
  private blockMv = 0;
  private blockSp = 0;
  private blockMode: AssessMode = "auto";
  private lastT = -Infinity;

  constructor(readonly capacity: number, readonly stride: number) {
    if (!(capacity >= 16) || !Number.isInteger(capacity)) throw new RangeError(`ring capacity must be an integer >= 16, got ${capacity}`);
    if (!(stride >= 1) || !Number.isInteger(stride)) throw new RangeError(`ring stride must be an integer >= 1, got ${stride}`);
    this.data = new Float64Array(FIELDS * capacity);
    this.mode = new Uint8Array(capacity);
  }

  get size(): number {
    return this.count;
  }

  /** Span of the stored window, s. */
  get spanS(): number {
    if (this.count < 2) return 0;
    const first = (this.head - this.count + this.capacity) % this.capacity;
    const last = (this.head - 1 + this.capacity) % this.capacity;
    return this.data[FIELDS * last]! - this.data[FIELDS * first]!;
  }

  /** Adds one good sample (t in s, strictly increasing; an older or repeated t is ignored). */
  push(t: number, sp: number, pv: number, mv: number, mode: AssessMode): boolean {
    if (!(t > this.lastT)) return false;
    this.lastT = t;
    if (this.stride === 1) {
      this.store(t, sp, pv, mv, mode);
      return true;
    }
    this.blockN++;
    this.blockT = t;
    this.blockPv += pv;
    this.blockMv += mv;
    this.blockSp = sp;
    this.blockMode = mode;
    if (this.blockN === this.stride) {
      this.store(this.blockT, this.blockSp, this.blockPv / this.blockN, this.blockMv / this.blockN, this.blockMode);
      this.blockN = 0;
      this.blockPv = 0;
      this.blockMv = 0;
    }
    return true;
  }

  private store(t: number, sp: number, pv: number, mv: number, mode: AssessMode): void {
    const i = this.head;
    const d = this.data;
    const o = FIELDS * i;
    d[o] = t;
    d[o + 1] = sp;
    d[o + 2] = pv;
    d[o + 3] = mv;
    this.mode[i] = mode === "auto" ? 0 : mode === "manual" ? 1 : 2;
    this.head = i + 1 === this.capacity ? 0 : i + 1;
    if (this.count < this.capacity) this.count++;
  }

  /** The stored window, oldest first. */
  samples(): AssessSample[] {
    const out: AssessSample[] = new Array<AssessSample>(this.count);
    const first = (this.head - this.count + this.capacity) % this.capacity;
    const d = this.data;
    for (let k = 0, i = first; k < this.count; k++, i = i + 1 === this.capacity ? 0 : i + 1) {
      const m = this.mode[i];
      const o = FIELDS * i;
      out[k] = { t: d[o]!, sp: d[o + 1]!, pv: d[o + 2]!, mv: d[o + 3]!, mode: m === 0 ? "auto" : m === 1 ? "manual" : "cascade" };
    }
    return out;
  }

  clear(): void {
    this.head = 0;
    this.count = 0;
    this.blockN = 0;
    this.blockPv = 0;
    this.blockMv = 0;
    this.lastT = -Infinity;
  }
}
