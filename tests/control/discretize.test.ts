import { describe, expect, it } from "vitest";
import { det } from "mathjs";
import { c2dZoh, c2dZohStateSpace, charPoly } from "@/lib/control/discretize";
import { polyEval } from "@/lib/control/poly";
import { ControlArgumentError, NonFiniteInputError } from "@/lib/control/errors";
import type { DiscreteTf, ZohStateSpace } from "@/lib/control";

const e1 = Math.exp(-1);

/** Aligns on the constant term and compares within tol. */
function expectPoly(got: number[], want: number[], tol: number): void {
  const n = Math.max(got.length, want.length);
  const g = new Array<number>(n - got.length).fill(0).concat(got);
  const w = new Array<number>(n - want.length).fill(0).concat(want);
  for (let i = 0; i < n; i++) expect(Math.abs(g[i]! - w[i]!)).toBeLessThan(tol);
}

/** Impulse response of a z-descending transfer function (den monic) by its difference equation. */
function impulseTf(tf: DiscreteTf, n: number): number[] {
  const deg = tf.den.length - 1;
  const num = new Array<number>(tf.den.length - tf.num.length).fill(0).concat(tf.num);
  const y: number[] = [];
  for (let k = 0; k < n; k++) {
    let acc = k <= deg ? num[k]! : 0;
    for (let i = 1; i <= deg; i++) if (k - i >= 0) acc -= tf.den[i]! * y[k - i]!;
    y.push(acc);
  }
  return y;
}

/** Impulse response of the state-space model. */
function impulseSs(ss: ZohStateSpace, n: number): number[] {
  let x = new Array<number>(ss.b.length).fill(0);
  const y: number[] = [];
  for (let k = 0; k < n; k++) {
    const u = k === 0 ? 1 : 0;
    y.push(ss.c.reduce((s, c, i) => s + c * x[i]!, 0) + ss.d * u);
    x = ss.a.map((row, r) => row.reduce((s, a, i) => s + a * x[i]!, 0) + ss.b[r]! * u);
  }
  return y;
}

describe("c2dZoh: textbook worked examples (Franklin, Powell & Workman 1998 ch. 4; Ogata, Discrete-Time Control Systems; values from memory)", () => {
  it("1/(s+1) at T = 1 s gives 0.6321/(z - 0.3679)", () => {
    const d = c2dZoh({ num: [1], den: [1, 1] }, 1);
    expectPoly(d.num, [0.6321], 5e-5);
    expectPoly(d.den, [1, -0.3679], 5e-5);
    expectPoly(d.num, [1 - e1], 1e-15); // exact form 1 - e^{-1}
    expect(d.T).toBe(1);
  });

  it("1/(s(s+1)) at T = 1 s gives (0.3679 z + 0.2642)/((z - 1)(z - 0.3679))", () => {
    const d = c2dZoh({ num: [1], den: [1, 1, 0] }, 1);
    expectPoly(d.num, [0.3679, 0.2642], 5e-5);
    expectPoly(d.den, [1, -1 - 0.3679, 0.3679], 5e-5);
    expectPoly(d.num, [e1, 1 - 2 * e1], 1e-15); // exact: e^{-1} z + (1 - 2 e^{-1})
    expect(Math.abs(polyEval(d.den, 1))).toBeLessThan(1e-15); // the integrator stays at z = 1 (exact factor, rounded on expansion)
  });

  it("keeps the integrator exact: den(1) by Horner's rule is exactly 0 for integrating plants, with and without dead time", () => {
    // an integrator in G(s) is a pole at z = 1 in the ZOH model (Franklin, Powell & Workman 1998 sec. 4.3)
    const plants: [number[], number[], number, number][] = [
      [[1], [1, 1, 0], 1, 0],
      [[0.5], [1, 0], 1, 0],
      [[1], [1, 1, 0], 0.5, 0.2],
      [[1], [3, 1, 0], 0.1, 0],
      [[2, 1], [1, 0.7, 0.2, 0], 0.05, 0.13],
      [[1], [10, 7, 1, 0], 0.3, 0.9],
      [[1], [1, 0.4, 0], 0.01, 0],
      [[1], [2, 3, 1, 0], 0.7, 0],
      [[1], [1, 0, 0], 0.5, 0],
    ];
    for (const [num, den, T, delay] of plants) {
      const d = c2dZoh({ num, den }, T, delay);
      expect(polyEval(d.den, 1), `${den.join(",")} T=${T} delay=${delay}`).toBe(0);
    }
  });

  it("1/s^2 at T = 0.5 s gives T^2 (z + 1) / (2 (z - 1)^2)", () => {
    const d = c2dZoh({ num: [1], den: [1, 0, 0] }, 0.5);
    expectPoly(d.num, [0.125, 0.125], 1e-15);
    expectPoly(d.den, [1, -2, 1], 1e-15);
  });
});

describe("c2dZoh with repeated poles (a chain of equal lags)", () => {
  it("gives den = (z - e^{-T})^3 exactly for 1/(s+1)^3 (poles e^{lambda T}; derived by hand)", () => {
    const a = Math.exp(-0.5);
    const d = c2dZoh({ num: [1], den: [1, 3, 3, 1] }, 0.5);
    expectPoly(d.den, [1, -3 * a, 3 * a * a, -a * a * a], 1e-14);
    // ZOH keeps the DC gain 1
    expect(d.num.reduce((s, x) => s + x, 0) / d.den.reduce((s, x) => s + x, 0)).toBeCloseTo(1, 12);
  });
});

describe("c2dZoh accuracy at fast sampling", () => {
  it("matches 40-digit values for 1/(s+1)^4 at T = 0.01 s to 1e-12 relative (mpmath expm at 40 digits, computed once for this test)", () => {
    const d = c2dZoh({ num: [1], den: [1, 4, 6, 4, 1] }, 0.01);
    const num = [4.1334718262633401e-10, 4.5105994112813659e-9, 4.474658559878801e-9, 4.0354494695185715e-10];
    expect(d.num).toHaveLength(4);
    d.num.forEach((x, i) => expect(Math.abs(x - num[i]!) / num[i]!).toBeLessThan(1e-12));
    const a = Math.exp(-0.01);
    expectPoly(d.den, [1, -4 * a, 6 * a * a, -4 * a ** 3, a ** 4], 1e-14); // (z - e^{-T})^4
  });
});

describe("charPoly (Hessenberg + La Budde)", () => {
  it("equals det(zI - M) (mathjs det, LU) at 7 points for seeded random 6 x 6 matrices, to 1e-12 relative", () => {
    let seed = 17;
    const rand = (): number => {
      seed = (seed * 16807) % 2147483647; // Park–Miller minimal standard generator
      return seed / 2147483647;
    };
    for (let trial = 0; trial < 20; trial++) {
      const M = Array.from({ length: 6 }, () => Array.from({ length: 6 }, () => 2 * rand() - 1));
      const p = charPoly(M);
      expect(p).toHaveLength(7);
      expect(p[0]).toBe(1);
      for (const z of [-1.5, -0.7, 0, 0.3, 0.9, 1.4, 2.2]) {
        const ref = det(M.map((row, i) => row.map((m, j) => (i === j ? z : 0) - m)));
        const scale = p.reduce((s, c) => s * Math.abs(z) + Math.abs(c), 0);
        expect(Math.abs(polyEval(p, z) - ref) / scale).toBeLessThan(1e-12);
      }
    }
  });
});

describe("c2dZoh with dead time", () => {
  it("matches the modified z-transform of a first-order lag with a fractional delay (Åström & Wittenmark 1997 sec. 2.3, derived by hand)", () => {
    // K/(tau s + 1) e^{-s L}, L = N T + f: num = K[(1 - e^{-(T-f)/tau}) z + (e^{-(T-f)/tau} - e^{-T/tau})], den = z^(N+1) (z - e^{-T/tau})
    const K = 2;
    const tau = 4;
    const T = 1;
    for (const L of [0.3, 1.7, 3.25]) {
      const N = Math.floor(L / T);
      const f = L - N * T;
      const d = c2dZoh({ num: [K], den: [tau, 1] }, T, L);
      const a = Math.exp(-T / tau);
      const b = Math.exp(-(T - f) / tau);
      expectPoly(d.num, [K * (1 - b), K * (b - a)], 1e-12);
      expect(d.den).toHaveLength(N + 3);
      expectPoly(d.den, [1, -a, ...new Array<number>(N + 1).fill(0)], 1e-14);
    }
  });

  it("adds whole samples of delay as z factors in den, snapping near-whole ratios (0.3 s / 0.1 s = 3)", () => {
    const d = c2dZoh({ num: [1], den: [1, 1] }, 0.1, 0.3);
    expect(d.den).toHaveLength(5); // (z - a) z^3
    expect(d.num).toHaveLength(1);
    expect(c2dZohStateSpace({ num: [1], den: [1, 1] }, 0.1, 0.3).delay).toEqual({ seconds: 0.3, samples: 3, fraction: 0 });
  });

  it("keeps the steady-state gain: G_d(1) = G(0) for stable plants with any delay (ZOH property; common practice)", () => {
    const plants = [
      { num: [3], den: [10, 1] },
      { num: [1, 0.5], den: [1, 2, 5, 4] },
      { num: [2, 1], den: [1, 3] },
    ];
    for (const p of plants) {
      for (const L of [0, 0.35, 1.2]) {
        const d = c2dZoh(p, 0.25, L);
        const dc = polyEval(d.num, 1) / polyEval(d.den, 1);
        expect(dc).toBeCloseTo(p.num[p.num.length - 1]! / p.den[p.den.length - 1]!, 11);
      }
    }
  });

  it("has the same impulse response as its state-space form, with poles at e^{lambda T} and M at the origin", () => {
    const cases: [number[], number[], number, number][] = [
      [[1], [1, 0.6, 1], 0.1, 0.35],
      [[1, 0.5], [1, 2, 5, 4], 0.25, 0.6],
      [[2, 1], [1, 3], 0.1, 0.25],
      [[1], [1, 1, 0], 0.5, 0.2],
      [[4], [1], 1, 2.5],
    ];
    for (const [num, den, T, L] of cases) {
      const tf = c2dZoh({ num, den }, T, L);
      const ss = c2dZohStateSpace({ num, den }, T, L);
      const a = impulseTf(tf, 40);
      const b = impulseSs(ss, 40);
      for (let k = 0; k < 40; k++) expect(Math.abs(a[k]! - b[k]!)).toBeLessThan(1e-12);
      expect(ss.a.length).toBe(tf.den.length - 1);
    }
  });
});

describe("c2dZoh input checks", () => {
  it("refuses improper, zero-denominator, non-positive period, negative delay and non-finite input", () => {
    expect(() => c2dZoh({ num: [1, 0, 0], den: [1, 1] }, 1)).toThrow(ControlArgumentError);
    expect(() => c2dZoh({ num: [1], den: [0, 0] }, 1)).toThrow(ControlArgumentError);
    expect(() => c2dZoh({ num: [1], den: [1, 1] }, 0)).toThrow(ControlArgumentError);
    expect(() => c2dZoh({ num: [1], den: [1, 1] }, 1, -0.5)).toThrow(ControlArgumentError);
    expect(() => c2dZoh({ num: [Number.NaN], den: [1, 1] }, 1)).toThrow(NonFiniteInputError);
    expect(() => c2dZoh({ num: [1], den: [1, 1] }, Number.POSITIVE_INFINITY)).toThrow(NonFiniteInputError);
  });

  it("accepts leading zeros and a non-monic denominator", () => {
    const d = c2dZoh({ num: [0, 0, 2], den: [0, 5, 1] }, 0.5);
    const ref = c2dZoh({ num: [0.4], den: [1, 0.2] }, 0.5);
    expectPoly(d.num, ref.num, 1e-15);
    expectPoly(d.den, ref.den, 1e-15);
  });
});
