/**
 * The IV covariance's noise-autocovariance sums (lib/control/riv-covariance.ts, `ScoreSum`) are
 * kept with one decay factor per family of sums and windows of the last samples. This checks them
 * against the definition written out here, from the whole history of samples since the last reset
 * (Söderström & Stoica, *System Identification*, 1989, sec. 8.2, from memory; the weights as the
 * class comment states them):
 *   gamma(t) = sum_k mu^(n-k) e(k) e(k-t) / sum_k mu^(n-k),  e(k) = y(k) - phi(k)' theta,
 *   Z_t = sum_k lam^(2(n-k)) lam^t z(k) z(k-t)',  S = sum_t gamma(t) (Z_t + Z_t'), t = 0..L,
 * projected to the nearest PSD matrix. The reference is deliberately slow (O(n L d^2) per query)
 * and shares no code with the sums it checks; it also writes the checkpoint the sums had when every
 * one was scaled each sample, which the fast sums must still read (their own resumes bit for bit).
 * The same at the estimator: parameterCovariance() and the closed-loop radius interval of
 * InstrumentalArxEstimator against ivCovariance with the reference's S (seeded closed and open loops).
 */
import { afterEach, describe, expect, it, vi } from "vitest";
import { closedLoopCoefficientCovariance, poleConfidence } from "@/lib/control/confidence";
import { discretePid } from "@/lib/control/closed-loop";
import { nearestPsd } from "@/lib/control/linalg";
import { InstrumentalArxEstimator } from "@/lib/control/riv";
import { HAC_MIN_PER_PARAMETER, ivCovariance, NOISE_MEMORY, prefilterNoiseLags, ScoreSum, type ScoreSumState } from "@/lib/control/riv-covariance";
import { PREFILTER_POLE } from "@/server/tracking/conditioning";
import { mulberry32, normal } from "../helpers/seeded-random";
import { closedLoopSamples, COMPLEX_PAIR, REAL_POLE } from "./tracker-coverage";

/** The sums by their definition, from the stored history since the last reset. */
class ReferenceSums {
  private readonly zs: number[][] = [];
  private readonly xs: number[][] = [];
  constructor(private readonly d: number, private readonly lags: number, private readonly lam: number) {}
  add(z: ArrayLike<number>, phi: ArrayLike<number>, y: number): void {
    this.zs.push(Array.from(z));
    this.xs.push([y, ...Array.from(phi)]);
  }
  reset(): void {
    this.zs.length = 0;
    this.xs.length = 0;
  }
  ready(): boolean {
    let w = 0;
    for (let k = 0; k < this.zs.length; k++) w = this.lam * w + 1;
    return w >= HAC_MIN_PER_PARAMETER * this.d;
  }
  /** Z_t, row-major d x d. */
  Z(t: number): number[] {
    const { d, lam, zs } = this;
    const n = zs.length;
    const out = new Array<number>(d * d).fill(0);
    for (let k = t; k < n; k++) {
      const w = lam ** (2 * (n - 1 - k)) * lam ** t;
      for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) out[i * d + j] = out[i * d + j]! + w * zs[k]![i]! * zs[k - t]![j]!;
    }
    return out;
  }
  /** C_t = sum mu^(n-k) x(k) x(k-t)', row-major (d + 1) x (d + 1) (only for the checkpoint). */
  C(t: number): number[] {
    const { xs } = this;
    const e = this.d + 1;
    const mu = this.lam ** (1 / NOISE_MEMORY);
    const n = xs.length;
    const out = new Array<number>(e * e).fill(0);
    for (let k = t; k < n; k++) for (let a = 0; a < e; a++) for (let b = 0; b < e; b++) out[a * e + b] = out[a * e + b]! + mu ** (n - 1 - k) * xs[k]![a]! * xs[k - t]![b]!;
    return out;
  }
  autocovariance(theta: ArrayLike<number>): number[] {
    const mu = this.lam ** (1 / NOISE_MEMORY);
    const n = this.xs.length;
    const e = this.xs.map((x) => x[0]! - x.slice(1).reduce((s, v, i) => s + v * theta[i]!, 0));
    let W = 0;
    for (let k = 0; k < n; k++) W += mu ** (n - 1 - k);
    const g: number[] = [];
    for (let t = 0; t <= this.lags; t++) {
      let s = 0;
      for (let k = t; k < n; k++) s += mu ** (n - 1 - k) * e[k]! * e[k - t]!;
      g.push(W > 0 ? s / W : 0);
    }
    return g;
  }
  psd(theta: ArrayLike<number>): Float64Array {
    const d = this.d;
    const g = this.autocovariance(theta);
    const S = new Float64Array(d * d);
    for (let t = 0; t <= this.lags; t++) {
      const Z = this.Z(t);
      for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) S[i * d + j] = S[i * d + j]! + g[t]! * (Z[i * d + j]! + (t > 0 ? Z[j * d + i]! : 0));
    }
    return nearestPsd(S, d);
  }
  /** The checkpoint as the per-sample scaled sums wrote it: Z_t, C_t in turn, rings of lags 1..L newest first (zeros beyond the history). */
  checkpoint(): ScoreSumState {
    const { d, lags, zs, xs } = this;
    const n = zs.length;
    const ring = (h: number[][], m: number) => Array.from({ length: lags }, (_, t) => (t < n ? h[n - 1 - t]! : new Array<number>(m).fill(0))).flat();
    let weight = 0;
    let noiseWeight = 0;
    for (let k = 0; k < n; k++) {
      weight = this.lam * weight + 1;
      noiseWeight = this.lam ** (1 / NOISE_MEMORY) * noiseWeight + 1;
    }
    const lagsTo = (f: (t: number) => number[]) => Array.from({ length: lags + 1 }, (_, t) => f(t)).flat();
    return { Z: lagsTo((t) => this.Z(t)), C: lagsTo((t) => this.C(t)), zr: ring(zs, d), xr: ring(xs, d + 1), weight, noiseWeight, count: n };
  }
}

/** max |a - b| / max |b|. */
function relDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let num = 0;
  let den = 0;
  for (let i = 0; i < b.length; i++) {
    num = Math.max(num, Math.abs(a[i]! - b[i]!));
    den = Math.max(den, Math.abs(b[i]!));
  }
  return den > 0 ? num / den : num;
}

const arr = (_: string, v: unknown) => v as number[];
const num = (_: string, v: unknown) => v as number;

describe("ScoreSum (global decay factors, sample windows) against the definition", () => {
  // the tracker's sizes (ARX(2,2,1) and its reduced ARX(1,2,1) behind the prefilter: L = na + 44),
  // no lags, and a short memory that folds the decay factors into the sums many times
  it.each([
    { d: 4, lags: 2 + prefilterNoiseLags(PREFILTER_POLE), lam: 0.995 },
    { d: 3, lags: 1 + prefilterNoiseLags(PREFILTER_POLE), lam: 0.995 },
    { d: 2, lags: 0, lam: 1 },
    { d: 4, lags: 7, lam: 0.5 },
  ])("d $d, $lags lags, lambda $lam: same gamma, S and readiness to 1e-9; reads the checkpoint of the per-sample scaled sums", ({ d, lags, lam }) => {
    const g = normal(mulberry32(17 * d + lags));
    const fast = new ScoreSum(d, lags, lam);
    const ref = new ReferenceSums(d, lags, lam);
    const z = new Float64Array(d);
    const phi = new Float64Array(d);
    const theta = Array.from({ length: d }, () => 0.5 * g());
    let y = 0;
    let worst = 0;
    for (let k = 1; k <= 2400; k++) {
      // coloured data: an AR(1) output beside white instruments and regressors
      y = 0.8 * y + g();
      for (let i = 0; i < d; i++) {
        z[i] = g();
        phi[i] = 0.5 * z[i]! + g();
      }
      fast.add(z, phi, y);
      ref.add(z, phi, y);
      if (k === 900) {
        fast.reset();
        ref.reset();
      }
      if ([1, 3, 60, 899, 901, 905, 1500, 2400].includes(k)) {
        expect(fast.ready()).toBe(ref.ready());
        const gamma = ref.autocovariance(theta);
        worst = Math.max(worst, relDiff(fast.autocovariance(theta), gamma), relDiff(fast.psd(theta), ref.psd(theta)));
        const cp = fast.toJSON();
        const want = ref.checkpoint();
        expect(cp.count).toBe(want.count);
        worst = Math.max(worst, Math.abs(cp.weight - want.weight) / want.weight, Math.abs(cp.noiseWeight! - want.noiseWeight!) / want.noiseWeight!);
        // its own checkpoint read back gives S bit for bit
        const resumed = new ScoreSum(d, lags, lam);
        resumed.load(JSON.parse(JSON.stringify(cp)) as ScoreSumState, arr, num);
        expect(Array.from(resumed.psd(theta))).toEqual(Array.from(fast.psd(theta)));
        // the reference's checkpoint (the per-sample layout) read back gives the same S
        const loaded = new ScoreSum(d, lags, lam);
        loaded.load(want, arr, num);
        worst = Math.max(worst, relDiff(loaded.psd(theta), ref.psd(theta)));
      }
    }
    expect(worst).toBeLessThan(1e-9);
  });

  it("continues from its checkpoint bit for bit", () => {
    const g = normal(mulberry32(5));
    const lags = 2 + prefilterNoiseLags(PREFILTER_POLE);
    const a = new ScoreSum(4, lags, 0.995);
    const ref = new ReferenceSums(4, lags, 0.995);
    const z = new Float64Array(4);
    const phi = new Float64Array(4);
    let b: ScoreSum | null = null;
    for (let k = 1; k <= 700; k++) {
      for (let i = 0; i < 4; i++) [z[i], phi[i]] = [g(), g()];
      const y = g();
      for (const s of [a, b, ref]) s?.add(z, phi, y);
      if (k === 333) {
        b = new ScoreSum(4, lags, 0.995);
        b.load(JSON.parse(JSON.stringify(a.toJSON())) as ScoreSumState, arr, num);
      }
    }
    const theta = [-1.4, 0.45, 0.2, 0.1];
    expect(Array.from(b!.psd(theta))).toEqual(Array.from(a.psd(theta)));
    expect(relDiff(a.psd(theta), ref.psd(theta))).toBeLessThan(1e-9);
  });
});

describe("InstrumentalArxEstimator: the covariance and radius interval with the fast sums equal those with the definition", () => {
  let refs = new Map<ScoreSum, ReferenceSums>();
  const mirror = (lags: number, lam: number) => {
    vi.restoreAllMocks();
    refs = new Map();
    const add = ScoreSum.prototype.add;
    const reset = ScoreSum.prototype.reset;
    const refOf = (s: ScoreSum, d: number) => refs.get(s) ?? refs.set(s, new ReferenceSums(d, lags, lam)).get(s)!;
    vi.spyOn(ScoreSum.prototype, "add").mockImplementation(function (this: ScoreSum, z, phi, y) {
      refOf(this, z.length).add(z, phi, y);
      add.call(this, z, phi, y);
    });
    vi.spyOn(ScoreSum.prototype, "reset").mockImplementation(function (this: ScoreSum) {
      refs.get(this)?.reset();
      reset.call(this);
    });
  };
  afterEach(() => vi.restoreAllMocks());

  /** parameterCovariance() of est, the same with the reference's S, and the relative difference of the two S. */
  function both(est: InstrumentalArxEstimator): { fast: number[][]; ref: number[][]; S: number } {
    const [sums, ref] = [...refs.entries()][0]!;
    const st = est.toJSON();
    const lam = est.options.forgetting;
    const factor = (1 + lam ** est.informative) / (1 + lam);
    const d = est.d;
    const want = ivCovariance(Float64Array.from(st.R), Float64Array.from(st.Szz), ref!, est.theta, est.residualVariance(), factor, d);
    return { fast: est.parameterCovariance(), ref: want, S: relDiff(sums!.psd(est.theta), ref!.psd(est.theta)) };
  }

  it.each([REAL_POLE, COMPLEX_PAIR])("closed loop, $name, prefiltered, auxiliary instruments: 4 seeded runs of 1,500 samples", (P) => {
    const ctrl = discretePid({ kp: P.kp, ti: P.ti, T: 1, action: "reverse" });
    const lags = 2 + prefilterNoiseLags(PREFILTER_POLE);
    let worst = 0;
    let fromNoise = 0;
    for (let seed = 100; seed < 104; seed++) {
      mirror(lags, 0.995);
      const est = new InstrumentalArxEstimator({ na: 2, nb: 2, nk: 1, controller: ctrl, noiseLags: lags });
      let prev: number[] | null = null;
      const f = [0, 0, 0];
      for (const { sp, pv, u } of closedLoopSamples(P, 1500, seed)) {
        const now = [u, pv, sp];
        if (prev) {
          for (let i = 0; i < 3; i++) f[i] = PREFILTER_POLE * f[i]! + now[i]! - prev[i]!;
          est.push(f[0]!, f[1]!, f[2]!);
        }
        prev = now;
      }
      const { fast, ref, S } = both(est);
      if ([...refs.values()][0]!.ready()) fromNoise++;
      // R^-1 S R^-T magnifies the rounding of S (S itself equal to ~1e-13) by up to 1 / (pivot
      // ratio)^2; the sums scaled every sample (before 2026-12-03) differed from this definition by
      // as much: covariance 3.8e-8 and 3.4e-8 on seeds 102 and 103 of the real pole (pivot ratios
      // 1.5e-4 and 6.2e-5), against 4.1e-8 and 3.3e-8 now
      const tol = Math.max(1e-9, 1e-12 / est.conditioning ** 2);
      worst = Math.max(worst, S, relDiff(fast.flat(), ref.flat()) * (1e-9 / tol));
      const interval = (cov: number[][]) => {
        const cc = closedLoopCoefficientCovariance(est.model(), ctrl, cov);
        const dom = poleConfidence(cc.coeffs, cc.covariance).reduce((x, y) => (y.radius > x.radius ? y : x));
        return dom.radiusInterval;
      };
      worst = Math.max(worst, relDiff(interval(fast), interval(ref)) * (1e-9 / tol));
    }
    expect(fromNoise).toBe(4);
    expect(worst).toBeLessThan(1e-9);
  });

  it("manual (input instruments, sums restarted when the auxiliary model takes over): 4 seeded runs of 800 samples", () => {
    let worst = 0;
    for (let seed = 1; seed <= 4; seed++) {
      mirror(2, 0.995);
      const g = normal(mulberry32(seed));
      const est = new InstrumentalArxEstimator({ na: 2, nb: 2, nk: 1 });
      const y0 = [0, 0];
      const uh = [0, 0];
      for (let k = 0; k < 800; k++) {
        const yk = 1.5 * y0[0]! - 0.7 * y0[1]! + 0.5 * uh[0]! + 0.3 * uh[1]!;
        const uk = g();
        est.push(uk, yk + 0.3 * g(), 0, "open");
        [y0[1], y0[0], uh[1], uh[0]] = [y0[0]!, yk, uh[0]!, uk];
      }
      const { fast, ref, S } = both(est);
      expect([...refs.values()][0]!.ready()).toBe(true);
      expect(est.conditioning).toBeGreaterThan(1e-3);
      worst = Math.max(worst, S, relDiff(fast.flat(), ref.flat()));
    }
    expect(worst).toBeLessThan(1e-9);
  });
});
