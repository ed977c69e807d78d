/**
 * The two tuning signs of the diagnosis that weigh the error's own swing and its disturbance time:
 *
 * - Quarter-amplitude swing. For an AR(2) process the autocorrelation follows the Yule–Walker
 *   recursion ρ(k) = −a1 ρ(k−1) − a2 ρ(k−2), ρ(1) = −a1/(1 + a2) (Box, Jenkins & Reinsel, *Time
 *   Series Analysis*, ch. 3), and its first trough is −√DR, DR = exp(−2πζ/√(1−ζ²)) the decay ratio
 *   of the mode: quarter-amplitude damping (DR = 0.25, ζ ≈ 0.215; Ziegler & Nichols 1942, common
 *   practice) is a dip of one half. White measurement noise scales every lag > 0 alike, so the dip
 *   measured against the lag-1 value keeps that figure (Miao & Seborg 1999 read the decay ratio
 *   from the ACF; from memory).
 * - A loop that removes its disturbances within a few dead times is not sluggish (SIMC τc of one to
 *   a few θ; Skogestad, J. Process Control 13, 2003, from memory), whatever its Harris index.
 * - The disturbance model's decay ratio (details.disturbanceDecayRatio, closed-loop.ts): for an
 *   AR(2) error it is the mode's analytic DR = exp(−2πζ/√(1−ζ²)) (Box, Jenkins & Reinsel). It is
 *   reported, not used in the verdict: it mixes the load's colour in (a SIMC-tuned loop under an
 *   AR(1) load reads 0.2–0.4), and as a sign of aggressive tuning it called healthy loops
 *   aggressive on held-out seeds (docs/assessment-rounds.md, tuning-sign rounds of 2026-12-03).
 */
import { describe, expect, it } from "vitest";
import { disturbanceResponse } from "@/lib/assessment/closed-loop";
import { diagnose } from "@/lib/assessment/diagnosis";
import { autocorrelation } from "@/lib/assessment/signal";
import { Prng } from "@/simulators/prng";
import { diagnosisInput as input } from "./diagnosis-input";
import { ar2Noise } from "./loop-sim";

/** AR(2) coefficients for damping ζ and a period of `period` samples. */
function ar2(zeta: number, period: number): { a1: number; a2: number; wnT: number; dr: number } {
  const th = (2 * Math.PI) / period;
  const wnT = th / Math.sqrt(1 - zeta * zeta);
  const r = Math.exp(-zeta * wnT);
  return { a1: -2 * r * Math.cos(th), a2: r * r, wnT, dr: Math.exp((-2 * Math.PI * zeta) / Math.sqrt(1 - zeta * zeta)) };
}

/** Exact ACF by the Yule–Walker recursion. */
function exactAcf(a1: number, a2: number, lags: number): number[] {
  const rho = [1, -a1 / (1 + a2)];
  for (let k = 2; k <= lags; k++) rho.push(-a1 * rho[k - 1]! - a2 * rho[k - 2]!);
  return rho;
}

/** A quiet loop without oscillation, stiction sign or spectral line: only the tuning signs vary. */

describe("quarter-amplitude swing of the error", () => {
  it("the exact AR(2) autocorrelation dips to −√DR, a half at quarter-amplitude damping (Yule–Walker)", () => {
    for (const zeta of [0.1, 0.15, 0.215, 0.3]) {
      const { a1, a2, dr } = ar2(zeta, 40);
      const rho = exactAcf(a1, a2, 60);
      expect(Math.min(...rho), `ζ = ${zeta}`).toBeCloseTo(-Math.sqrt(dr), 2);
    }
    expect(Math.sqrt(ar2(0.215, 40).dr)).toBeCloseTo(0.5, 2);
  });

  it("measured against the lag-1 value the dip survives white measurement noise (20 seeds)", () => {
    for (const zeta of [0.15, 0.3]) {
      const { a1, a2, wnT, dr } = ar2(zeta, 40);
      const relative = Math.sqrt(dr) / exactAcf(a1, a2, 1)[1]!;
      for (let seed = 1; seed <= 20; seed++) {
        const rng = new Prng(seed);
        const x = ar2Noise(rng, 20_000, zeta, wnT, 500);
        let v = 0;
        for (const s of x) v += s * s;
        const sd = Math.sqrt(v / x.length);
        // white noise with the process's own variance halves every lag > 0
        const y = x.map((s) => s + sd * rng.normal());
        const r = autocorrelation(y, 60);
        let dip = 0;
        for (let k = 1; k <= 60; k++) dip = Math.min(dip, r[k]!);
        expect(-dip / r[1]!, `ζ = ${zeta}, seed ${seed}`).toBeCloseTo(relative, 1);
        expect(dip, `raw dip halves: ζ = ${zeta}, seed ${seed}`).toBeGreaterThan(-0.75 * Math.sqrt(dr));
      }
    }
  });

  it("a swing beyond quarter amplitude reads aggressive-tuning; a smaller one, or one in a noise-dominated error, does not", () => {
    const beyond = diagnose(input({ ringDepth: -0.3, overshoot: 0.6 }));
    expect(beyond.label).toBe("aggressive-tuning");
    expect(beyond.evidence[0]).toMatch(/quarter amplitude/);
    expect(diagnose(input({ ringDepth: -0.3, overshoot: 0.45 })).label).toBe("healthy");
    // a dip of −0.16 against a lag-1 value of 0.18: the error is mostly white noise
    expect(diagnose(input({ ringDepth: -0.16, overshoot: 0.9 })).label).toBe("healthy");
    // a stick-slip sign is asked first
    expect(diagnose(input({ ringDepth: -0.3, overshoot: 0.6, stiction: { verdict: "likely", evidence: ["likely valve stiction"], curveFitIndex: 0.7, modelFitRatio: 0.9 } })).label).toBe("valve-stiction");
  });
});

describe("disturbance time within a few dead times", () => {
  it("vetoes a high Harris index and a missing swing-back, and says why", () => {
    const fast = diagnose(input({ harrisIndex: 6, disturbanceTimeToDeadTime: 2, overshoot: 0.03, ringDepth: -0.03 }));
    expect(fast.label).toBe("healthy");
    expect(fast.evidence.join(" ")).toMatch(/dead times.*minimum variance/);
  });

  it("leaves the sluggish signs alone from 5 dead times on, and calls 15 and more sluggish by itself", () => {
    expect(diagnose(input({ harrisIndex: 6, disturbanceTimeToDeadTime: 8 })).label).toBe("sluggish-tuning");
    expect(diagnose(input({ disturbanceTimeToDeadTime: 8, overshoot: 0.03, ringDepth: -0.03 })).label).toBe("sluggish-tuning");
    expect(diagnose(input({ disturbanceTimeToDeadTime: 8 })).label).toBe("healthy");
    expect(diagnose(input({ disturbanceTimeToDeadTime: 20 })).label).toBe("sluggish-tuning");
  });

  it("without a dead time the other signs decide as before", () => {
    expect(diagnose(input({ overshoot: 0.03, ringDepth: -0.03 })).label).toBe("sluggish-tuning");
    expect(diagnose(input({})).label).toBe("healthy");
  });
});

describe("closed-loop damping from the disturbance model", () => {
  it("an AR(2) error gives its mode's analytic decay ratio within 0.05 (ζ 0.15 and 0.3, 20 seeds of 20,000 samples)", () => {
    for (const zeta of [0.15, 0.3]) {
      const { wnT, dr } = ar2(zeta, 40);
      for (let seed = 1; seed <= 20; seed++) {
        const x = ar2Noise(new Prng(seed), 20_000, zeta, wnT, 500);
        const got = disturbanceResponse(x, [[0, x.length]], 1, 1, 1)?.decayRatio ?? null;
        expect(got, `ζ = ${zeta}, seed ${seed}`).not.toBeNull();
        expect(Math.abs(got! - dr), `ζ = ${zeta}, seed ${seed}: ${got} against ${dr}`).toBeLessThan(0.05);
      }
    }
  });
});
