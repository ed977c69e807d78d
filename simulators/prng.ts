/**
 * Seeded pseudo-random numbers for the simulators: every run with the same seed produces the
 * same telemetry. mulberry32 (a 32-bit multiply-xorshift generator, public domain, common
 * practice for reproducible simulation) and Box-Muller normals.
 */
export class Prng {
  private state: number;
  private spare: number | null = null;

  constructor(seed: number) {
    if (!Number.isFinite(seed)) throw new RangeError(`seed must be a finite number, got ${seed}`);
    this.state = Math.trunc(seed) >>> 0;
  }

  /** Uniform in [0, 1). */
  next(): number {
    this.state = (this.state + 0x6d2b79f5) >>> 0;
    let t = this.state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  }

  /** Uniform in [lo, hi). */
  uniform(lo: number, hi: number): number {
    return lo + (hi - lo) * this.next();
  }

  /** Standard normal (Box-Muller, the second value kept for the next call). */
  normal(): number {
    if (this.spare !== null) {
      const s = this.spare;
      this.spare = null;
      return s;
    }
    let u = this.next();
    while (u <= 1e-300) u = this.next();
    const v = this.next();
    const r = Math.sqrt(-2 * Math.log(u));
    this.spare = r * Math.sin(2 * Math.PI * v);
    return r * Math.cos(2 * Math.PI * v);
  }

  /** True with probability p. */
  chance(p: number): boolean {
    return this.next() < p;
  }

  /** Serialisable state (for cloning a generator). */
  get seedState(): number {
    return this.state;
  }
}

/** A child seed derived from a parent seed and a string (FNV-1a of the label mixed in). */
export function deriveSeed(seed: number, label: string): number {
  let h = 0x811c9dc5 ^ (Math.trunc(seed) >>> 0);
  for (let i = 0; i < label.length; i++) {
    h ^= label.charCodeAt(i);
    h = Math.imul(h, 0x01000193);
  }
  return h >>> 0;
}
