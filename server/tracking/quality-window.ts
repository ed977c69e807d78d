/**
 * Sample quality over a loop's recent samples, for its state (`sampleQuality`): how many of the
 * last `size` samples were bad or uncertain, how many in-range PV outliers the residual test
 * bounded, totals since the tracker started, and the last bad sample. A sensor-fault finding reads
 * the share and the time of the last bad sample from here.
 */
import type { QualityReason } from "@/lib/domain/sample-quality";
import type { SampleQualityDto } from "@/lib/domain/types";

const GOOD = 0;
const BAD = 1;
const UNCERTAIN = 2;
/** A good sample whose PV the residual test bounded. */
const OUTLIER = 3;

export class QualityWindow {
  private readonly codes: Uint8Array;
  private filled = 0;
  private next = 0;
  private counts = [0, 0, 0, 0];
  badTotal = 0;
  uncertainTotal = 0;
  lastBadAt: number | null = null;
  lastBadReason: QualityReason | null = null;

  constructor(readonly size: number) {
    this.codes = new Uint8Array(size);
  }

  /** One sample: good, or bad/uncertain with its reason, at sample time `t` (epoch ms). */
  add(quality: "good" | "bad" | "uncertain", reason: QualityReason | null, t: number): void {
    const code = quality === "bad" ? BAD : quality === "uncertain" ? UNCERTAIN : GOOD;
    if (this.filled === this.size) this.counts[this.codes[this.next]!]!--;
    else this.filled++;
    this.codes[this.next] = code;
    this.counts[code]!++;
    this.next = (this.next + 1) % this.size;
    if (code === BAD) {
      this.badTotal++;
      this.lastBadAt = t;
      this.lastBadReason = reason;
    } else if (code === UNCERTAIN) this.uncertainTotal++;
  }

  /** The newest sample was a good one whose PV the residual test bounded. */
  markOutlier(): void {
    if (this.filled === 0) return;
    const last = (this.next + this.size - 1) % this.size;
    if (this.codes[last] !== GOOD) return;
    this.counts[GOOD]!--;
    this.codes[last] = OUTLIER;
    this.counts[OUTLIER]!++;
  }

  dto(): SampleQualityDto {
    const n = this.filled;
    const bad = this.counts[BAD]!;
    return {
      windowSamples: n,
      bad,
      uncertain: this.counts[UNCERTAIN]!,
      outliers: this.counts[OUTLIER]!,
      badShare: n > 0 ? bad / n : 0,
      badTotal: this.badTotal,
      uncertainTotal: this.uncertainTotal,
      lastBadAt: this.lastBadAt,
      lastBadReason: this.lastBadReason,
    };
  }
}
