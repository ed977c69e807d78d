/**
 * The damping sign of aggressive tuning (lib/assessment/acf-decay.ts): the autocorrelation decay
 * ratio of Miao & Seborg (IEEE CCA 1999; from memory), R = a / b, on the differenced error.
 *
 * - For ρ(k) = r^k cos(ωk) the construction gives R = r^(π/ω) = √DR: with s = √DR the extremes are
 *   1, −s, s², −s³ at lags 0, P/2, P, 3P/2, so b = (1 + s²)/2 + s and a = s² + (s + s³)/2 = s·b.
 *   Quarter-amplitude damping (DR 0.25, Ziegler & Nichols 1942, common practice) is R = 0.5.
 * - An AR(2) process has the ACF of the Yule–Walker recursion (Box, Jenkins & Reinsel, *Time Series
 *   Analysis*, ch. 3), r^k times a shifted cosine: R stays close to √DR.
 * - A first-order-plus-dead-time loop under PI (tests/assessment/loop-sim.ts: exact zero-order-hold
 *   plant, velocity PI, an AR(1) load and white measurement noise): its closed-loop decay ratio is
 *   computed from the characteristic polynomial (1 − a q)(1 − q) + b·kp·q^(D+2)·((1 + T/Ti) − q) with
 *   q = z⁻¹, a = e^(−T/τ), b = (1 − a)K, D the dead time in samples (the simulator applies the
 *   output D + 1 samples later); the roots were also taken with numpy.roots (τ 100 s, θ 10 s, T 1 s;
 *   kp 10.5, Ti 100 s: slowest pair |z| 0.9843, period 49.97 s, DR 0.453; SIMC kp 5, Ti 80 s: |z|
 *   0.9424, DR 0.009).
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig } from "@/lib/assessment";
import { differencedErrorDecay, miaoSeborgRatio } from "@/lib/assessment/acf-decay";
import { autocorrelation } from "@/lib/assessment/signal";
import { polyRoots } from "@/lib/control";
import { Prng } from "@/simulators/prng";
import { ar2Noise, flowLoopJson, simulateLoop } from "./loop-sim";

/**
 * The slowest oscillating pair (largest radius among complex poles) of the simulated loop: plant
 * τ, dead time D samples (applied D + 1 samples after the controller), velocity PI.
 */
function closedLoopMode(kp: number, ti: number, tau: number, deadS: number, K = 1, T = 1): { dr: number; periodS: number; radius: number } {
  const a = Math.exp(-T / tau);
  const b = (1 - a) * K;
  const D = Math.round(deadS / T);
  // Ascending powers of q = z^-1; z^(D+3) P(1/z) has them as descending powers of z.
  const p = new Array<number>(D + 4).fill(0);
  p[0] = 1;
  p[1] = -(1 + a);
  p[2] = a;
  p[D + 2] = p[D + 2]! + b * kp * (1 + T / ti);
  p[D + 3] = p[D + 3]! - b * kp;
  let best: { re: number; im: number } | null = null;
  for (const z of polyRoots(p)) if (Math.abs(z.im) > 1e-9 && (!best || Math.hypot(z.re, z.im) > Math.hypot(best.re, best.im))) best = z;
  const radius = Math.hypot(best!.re, best!.im);
  const angle = Math.abs(Math.atan2(best!.im, best!.re));
  return { dr: Math.pow(radius, (2 * Math.PI) / angle), periodS: (2 * Math.PI * T) / angle, radius };
}

// τ 100 s, dead time 10 s, T 1 s. SIMC (Skogestad 2003, τc = θ; from memory): kp = τ/(K·2θ) = 5, Ti = min(τ, 8θ) = 80 s.
function loop(kp: number, ti: number, seed: number) {
  const cfg = parseLoopConfig(flowLoopJson("FIC-311", { deadTimeS: 10 }, { kp, ti }));
  return assessLoop(simulateLoop({ seed, n: 30_000, kp, ti, tauS: 100, deadS: 10, loadPole: 0.999, loadSigma: 0.05, noise: 0.1 }), cfg);
}

describe("Miao–Seborg autocorrelation decay ratio", () => {
  it("is √DR exactly for a damped cosine (worked out above), quarter amplitude at 0.5", () => {
    for (const dr of [0.1, 0.25, 0.45, 0.7]) {
      const period = 20;
      const r = Math.pow(dr, 1 / period);
      const acf = Array.from({ length: 80 }, (_, k) => Math.pow(r, k) * Math.cos((2 * Math.PI * k) / period));
      const ms = miaoSeborgRatio(acf, 1e-6, 1)!;
      // Exact when the sampled extremes fall on lags P/2, P, 3P/2; with strong damping the sampled
      // trough moves a lag earlier, hence 0.005.
      expect(ms.ratio).toBeCloseTo(Math.sqrt(dr), 2);
    }
  });

  it("stays within 0.06 of √DR on the exact ACF of AR(2) processes (Yule–Walker recursion)", () => {
    for (const zeta of [0.1, 0.2, 0.3]) {
      for (const period of [12, 25, 50]) {
        const th = (2 * Math.PI) / period;
        const wnT = th / Math.sqrt(1 - zeta * zeta);
        const r = Math.exp(-zeta * wnT);
        const a1 = -2 * r * Math.cos(th);
        const a2 = r * r;
        const rho = [1, -a1 / (1 + a2)];
        for (let k = 2; k < 6 * period; k++) rho.push(-a1 * rho[k - 1]! - a2 * rho[k - 2]!);
        const dr = Math.exp((-2 * Math.PI * zeta) / Math.sqrt(1 - zeta * zeta));
        const ms = miaoSeborgRatio(rho, 1e-6, 1)!;
        expect(Math.abs(ms.ratio - Math.sqrt(dr))).toBeLessThan(0.06);
      }
    }
  });

  it("the test loop's closed-loop modes from its characteristic polynomial agree with numpy.roots", () => {
    const aggressive = closedLoopMode(10.5, 100, 100, 10);
    expect(aggressive.radius).toBeCloseTo(0.9843, 4);
    expect(aggressive.periodS).toBeCloseTo(49.97, 1);
    expect(aggressive.dr).toBeCloseTo(0.453, 3);
    const simc = closedLoopMode(5, 80, 100, 10);
    expect(simc.radius).toBeCloseTo(0.9424, 4);
    expect(simc.dr).toBeCloseTo(0.009, 3);
  });

  it("reads the loop at twice SIMC's gain (closed-loop DR 0.45) as less damped than quarter amplitude, period and √DR within 10 % (10 seeds)", () => {
    const truth = closedLoopMode(10.5, 100, 100, 10);
    for (let seed = 1; seed <= 10; seed++) {
      const r = loop(10.5, 100, seed);
      const swing = r.details.acfDecay!;
      expect(swing).toBeTruthy();
      expect(Math.abs(swing.ratio - Math.sqrt(truth.dr))).toBeLessThan(0.1 * Math.sqrt(truth.dr));
      expect(Math.abs(swing.periodS - truth.periodS)).toBeLessThan(0.1 * truth.periodS);
      expect(swing.ratio - 1.645 * swing.ratioSd).toBeGreaterThan(0.5);
      expect(r.diagnosis.label).toBe("aggressive-tuning");
    }
  });

  it("never reads the SIMC-tuned loop (closed-loop DR 0.01) as less damped than quarter amplitude (10 seeds)", () => {
    for (let seed = 1; seed <= 10; seed++) {
      const r = loop(5, 80, seed);
      expect(r.diagnosis.label).toBe("healthy");
      const swing = r.details.acfDecay;
      if (swing) expect(swing.ratio + swing.ratioSd).toBeLessThan(0.4);
    }
  });

  it("sees an AR(2) mode of DR 0.4 that a slow load hides from the error's own ACF (20 seeds)", () => {
    // Mode: AR(2) with ζ 0.145 (DR = exp(−2πζ/√(1−ζ²)) = 0.40) and a period of 40 samples (Box,
    // Jenkins & Reinsel); beside it a slow AR(1) load (pole 0.999) of five times its variance and
    // white noise of a fifth of its deviation: the error's own ACF hardly dips.
    const zeta = 0.145;
    const dr = Math.exp((-2 * Math.PI * zeta) / Math.sqrt(1 - zeta * zeta));
    for (let seed = 1; seed <= 20; seed++) {
      const rng = new Prng(seed);
      const n = 40_000;
      const mode = ar2Noise(rng, n, zeta, (2 * Math.PI) / 40 / Math.sqrt(1 - zeta * zeta), 500);
      let sm = 0;
      for (const v of mode) sm += v * v;
      const sdMode = Math.sqrt(sm / n);
      const e = new Float64Array(n);
      let load = 0;
      const loadInnov = sdMode * Math.sqrt(5 * (1 - 0.999 * 0.999));
      for (let i = 0; i < n; i++) {
        load = 0.999 * load + loadInnov * rng.normal();
        e[i] = mode[i]! + load + 0.2 * sdMode * rng.normal();
      }
      const acf = autocorrelation(e, 60);
      expect(Math.min(...acf)).toBeGreaterThan(-0.15);
      const swing = differencedErrorDecay(e, [[0, n]], 1, 3, 0.2 * sdMode)!;
      expect(swing).toBeTruthy();
      expect(Math.abs(swing.ratio - Math.sqrt(dr))).toBeLessThan(0.1);
    }
  });

  it("finds no swing in white noise (increments correlate at lag 1 only)", () => {
    let seed = 7;
    const rnd = () => {
      seed = (seed * 16807) % 2147483647;
      return seed / 2147483647 - 0.5;
    };
    const e = Float64Array.from({ length: 20_000 }, rnd);
    const d = differencedErrorDecay(e, [[0, e.length]], 1, 1, 0);
    if (d) expect(d.ratio - d.ratioSd).toBeLessThan(0.5);
  });
});
