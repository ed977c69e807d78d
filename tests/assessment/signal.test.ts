/**
 * The FFT-based covariances of signal.ts and the real-sequence transforms of fft.ts against their
 * definitions and against numpy.
 *
 * - Sample autocovariance, by definition c(k) = (1/N) Σ_{t=1}^{N-k} (x_t - x̄)(x_{t+k} - x̄)
 *   (Box, Jenkins & Reinsel, Time Series Analysis, the biased estimate; common practice), summed
 *   directly in O(N·L), and the cross-covariance c_xy(k) = (1/N) Σ (x_t - x̄)(y_{t+k} - ȳ)
 *   likewise: equal to 1e-12 of the lag-0 scale on seeded data (an FFT's rounding is a few 1e-14
 *   of it), including record lengths that are odd, tiny, or not powers of two, and lag limits
 *   beyond the record.
 * - realForward / realInverse against the discrete Fourier transform's definition
 *   X(k) = Σ x(t) e^{-2πikt/N} summed directly, and against numpy.fft.rfft / irfft (Debian's
 *   python3-numpy, skipped without it).
 */
import { spawnSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { realForward, realInverse } from "@/lib/assessment/fft";
import { autocovariance, crossCovariance } from "@/lib/assessment/signal";
import { mulberry32, normal } from "../helpers/seeded-random";
import { PYTHON, pythonHas } from "../helpers/python";

const hasNumpy = pythonHas("numpy");

/** Seeded test signal: a slow sine, an offset and white noise (invented for the test). */
function signal(n: number, seed: number): Float64Array {
  const g = normal(mulberry32(seed));
  return Float64Array.from({ length: n }, (_, t) => 3 + Math.sin(t / 9) + 0.5 * g());
}

function mean(x: Float64Array): number {
  let s = 0;
  for (const v of x) s += v;
  return s / x.length;
}

/** The definition, summed directly: (1/N) Σ_t (x_t - x̄)(y_{t+k} - ȳ) over the t where both exist. */
function directCovariance(x: Float64Array, y: Float64Array, k: number): number {
  const n = x.length;
  const mx = mean(x);
  const my = mean(y);
  let s = 0;
  for (let t = Math.max(0, -k); t < n && t + k < n; t++) s += (x[t]! - mx) * (y[t + k]! - my);
  return s / n;
}

describe("autocovariance by FFT against the sample autocovariance's definition (Box, Jenkins & Reinsel)", () => {
  for (const n of [2, 3, 7, 100, 601, 1024, 3600]) {
    for (const maxLag of [0, 1, 40, 200, Math.floor(0.6 * n), n + 10]) {
      it(`N = ${n}, lags up to ${maxLag}: every lag within 1e-12 of c(0)`, () => {
        const x = signal(n, 1000 * n + maxLag);
        const c = autocovariance(x, maxLag);
        const lags = Math.min(maxLag, n - 1);
        expect(c.length).toBe(lags + 1);
        const c0 = directCovariance(x, x, 0);
        expect(c0).toBeGreaterThan(0);
        let worst = 0;
        for (let k = 0; k <= lags; k++) worst = Math.max(worst, Math.abs(c[k]! - directCovariance(x, x, k)) / c0);
        expect(worst).toBeLessThanOrEqual(1e-12);
      });
    }
  }

  it("a constant record has zero autocovariance at every lag", () => {
    const c = autocovariance(new Float64Array(50).fill(4.25), 20);
    for (const v of c) expect(Math.abs(v)).toBeLessThan(1e-15);
  });
});

describe("cross-covariance by FFT against its definition, both signs of the lag", () => {
  for (const n of [5, 100, 999, 3600]) {
    for (const maxLag of [0, 3, 45, n + 1]) {
      it(`N = ${n}, lags -${maxLag}..${maxLag}: within 1e-12 of √(c_xx(0) c_yy(0))`, () => {
        const x = signal(n, 7 * n + maxLag);
        const y = signal(n, 11 * n + maxLag + 1).map((v, t) => v + 0.8 * (x[Math.max(0, t - 2)]! - 3));
        const c = crossCovariance(x, y, maxLag);
        const lags = Math.min(maxLag, n - 1);
        expect(c.length).toBe(2 * lags + 1);
        const scale = Math.sqrt(directCovariance(x, x, 0) * directCovariance(y, y, 0));
        let worst = 0;
        for (let k = -lags; k <= lags; k++) worst = Math.max(worst, Math.abs(c[k + lags]! - directCovariance(x, y, k)) / scale);
        expect(worst).toBeLessThanOrEqual(1e-12);
      });
    }
  }
});

/** realForward of x (length 2H): the bins 0..H. */
function forward(x: Float64Array): { re: Float64Array; im: Float64Array } {
  const H = x.length / 2;
  const zr = Float64Array.from({ length: H }, (_, j) => x[2 * j]!);
  const zi = Float64Array.from({ length: H }, (_, j) => x[2 * j + 1]!);
  const re = new Float64Array(H + 1);
  const im = new Float64Array(H + 1);
  realForward(zr, zi, re, im);
  return { re, im };
}

describe("transform of a real sequence by one complex FFT of half the length", () => {
  for (const N of [2, 4, 8, 64, 1024]) {
    it(`N = ${N}: bins 0..N/2 equal the DFT's definition summed directly (1e-12 of Σ|x|), and the inverse gives x back`, () => {
      const x = signal(N, N).map((v) => v - 3);
      const { re, im } = forward(x);
      let scale = 0;
      for (const v of x) scale += Math.abs(v);
      for (let k = 0; k <= N / 2; k++) {
        let sr = 0;
        let si = 0;
        for (let t = 0; t < N; t++) {
          sr += x[t]! * Math.cos((2 * Math.PI * k * t) / N);
          si -= x[t]! * Math.sin((2 * Math.PI * k * t) / N);
        }
        expect(Math.abs(re[k]! - sr)).toBeLessThanOrEqual(1e-12 * scale);
        expect(Math.abs(im[k]! - si)).toBeLessThanOrEqual(1e-12 * scale);
      }
      const zr = new Float64Array(N / 2);
      const zi = new Float64Array(N / 2);
      realInverse(re, im, zr, zi);
      for (let j = 0; j < N / 2; j++) {
        expect(Math.abs(zr[j]! - x[2 * j]!)).toBeLessThanOrEqual(1e-12 * scale);
        expect(Math.abs(zi[j]! - x[2 * j + 1]!)).toBeLessThanOrEqual(1e-12 * scale);
      }
    });
  }

  it.skipIf(!hasNumpy)("N = 4096: equal to numpy.fft.rfft, and realInverse of a Hermitian spectrum to numpy.fft.irfft", () => {
    const N = 4096;
    const x = signal(N, 42);
    const { re, im } = forward(x);
    // an arbitrary Hermitian spectrum: bins 0 and N/2 real
    const g = normal(mulberry32(43));
    const sr = Float64Array.from({ length: N / 2 + 1 }, () => g());
    const si = Float64Array.from({ length: N / 2 + 1 }, (_, k) => (k === 0 || k === N / 2 ? 0 : g()));
    const script = [
      "import json, sys, numpy as np",
      "d = json.load(sys.stdin)",
      "X = np.fft.rfft(np.array(d['x']))",
      "y = np.fft.irfft(np.array(d['sr']) + 1j * np.array(d['si']), n=len(d['x']))",
      "print(json.dumps({'re': X.real.tolist(), 'im': X.imag.tolist(), 'y': y.tolist()}))",
    ].join("\n");
    const run = spawnSync(PYTHON, ["-c", script], { input: JSON.stringify({ x: Array.from(x), sr: Array.from(sr), si: Array.from(si) }), encoding: "utf8", maxBuffer: 64 << 20 });
    expect(run.status, run.stderr).toBe(0);
    const ref = JSON.parse(run.stdout) as { re: number[]; im: number[]; y: number[] };
    let scale = 0;
    for (const v of x) scale += Math.abs(v);
    for (let k = 0; k <= N / 2; k++) {
      expect(Math.abs(re[k]! - ref.re[k]!)).toBeLessThanOrEqual(1e-12 * scale);
      expect(Math.abs(im[k]! - ref.im[k]!)).toBeLessThanOrEqual(1e-12 * scale);
    }
    const zr = new Float64Array(N / 2);
    const zi = new Float64Array(N / 2);
    realInverse(sr, si, zr, zi);
    for (let j = 0; j < N / 2; j++) {
      expect(Math.abs(zr[j]! - ref.y[2 * j]!)).toBeLessThanOrEqual(1e-14);
      expect(Math.abs(zi[j]! - ref.y[2 * j + 1]!)).toBeLessThanOrEqual(1e-14);
    }
  });
});
