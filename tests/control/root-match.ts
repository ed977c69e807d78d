import { expect } from "vitest";
import type { Complex } from "@/lib/control/types";

/**
 * Greedy match of expected roots to computed ones (each computed root used once); returns the
 * largest distance in the complex plane. Root order differs between methods, so tests compare sets.
 */
export function maxMatchError(expected: Complex[], got: Complex[]): number {
  expect(got.length).toBe(expected.length);
  const used = new Array<boolean>(got.length).fill(false);
  let worst = 0;
  for (const e of expected) {
    let best = -1;
    let dist = Infinity;
    got.forEach((g, i) => {
      if (used[i]) return;
      const d = Math.hypot(g.re - e.re, g.im - e.im);
      if (d < dist) {
        dist = d;
        best = i;
      }
    });
    used[best] = true;
    worst = Math.max(worst, dist);
  }
  return worst;
}
