/**
 * Average residence time of a closed-loop set-point response (lib/control/residence-time.ts):
 * Tar = T Σ_k (1 - y_k) of the unit-gain step response. Checked against step responses summed by
 * hand and by the difference equation (independent of the closed form); the continuous counterpart
 * Tar = Σ τ_poles - Σ τ_zeros + dead time is in Åström & Hägglund, PID Controllers, 2nd ed., 1995
 * (from memory).
 */
import { describe, expect, it } from "vitest";
import { averageResidenceTime } from "@/lib/control/residence-time";

const pole = (re: number, im: number) => ({ re, im });
const slow = [pole(0.998, 0), pole(0.3, 0.2), pole(0.3, -0.2)];

describe("average residence time", () => {
  it("average residence time: a pure delay of N samples is N·T; a first-order lag is T/(1 - a); a PI zero near the slow pole cancels it", () => {
    // Σ_k (1 - y_k) of the unit step response, summed by hand: delay z^-3 -> 3; (1-a)/(z-a) -> Σ a^k = 1/(1-a).
    expect(averageResidenceTime([pole(0, 0), pole(0, 0), pole(0, 0)], [], 2)).toBeCloseTo(6, 12);
    expect(averageResidenceTime([pole(0.9, 0)], [], 0.5)).toBeCloseTo(0.5 / 0.1, 9);
    const piZero = [{ re: 0.9975, im: 0 }];
    // 1/(1-0.998) - 1/(1-0.9975) = 500 - 400 = 100 samples, plus the fast pair.
    const withZero = averageResidenceTime(slow, piZero, 1)!;
    const pair = 2 * ((1 - 0.3) / ((1 - 0.3) ** 2 + 0.2 ** 2));
    expect(withZero).toBeCloseTo(100 + pair, 6);
    expect(averageResidenceTime([pole(1.0, 0)], [], 1)).toBeNull();
  });

  it("a complex pair's residence time equals its step response summed term by term (Σ (1 - y_k))", () => {
    // G(z) = K (z - 0.5) / ((z - 0.8 - 0.3j)(z - 0.8 + 0.3j)), K so that G(1) = 1; y_k by the difference equation.
    const a1 = -1.6, a2 = 0.73; // (z^2 - 1.6 z + 0.73)
    const K = (1 + a1 + a2) / (1 - 0.5);
    let y1 = 0, y2 = 0, u1 = 0, u2 = 0, sum = 0;
    for (let k = 0; k < 5000; k++) {
      const y = -a1 * y1 - a2 * y2 + K * (u1 - 0.5 * u2);
      sum += 1 - y;
      y2 = y1; y1 = y; u2 = u1; u1 = 1;
    }
    expect(averageResidenceTime([pole(0.8, 0.3), pole(0.8, -0.3)], [{ re: 0.5, im: 0 }], 1)).toBeCloseTo(sum, 6);
  });

  it("poles moved k standard deviations toward the origin: the conservative (faster) figure", () => {
    // 0.99 moved by 0.01 is 0.98: T/(1 - 0.98) = 50 samples instead of 100.
    expect(averageResidenceTime([{ re: 0.99, im: 0, sdRadius: 0.01 }], [], 1, 0)).toBeCloseTo(100, 9);
    expect(averageResidenceTime([{ re: 0.99, im: 0, sdRadius: 0.01 }], [], 1, 1)).toBeCloseTo(50, 9);
  });
});
