/**
 * The allocation-free solver of the recursive estimators (lib/control/linalg.ts `solveInto`;
 * `shiftIn` has its own test in ./lag-vector.test.ts):
 * 1. `solveInto` against numpy.linalg.solve (Debian python3-numpy, LAPACK gesv) on 200 seeded
 *    random systems of sizes 1-8, computed from the same matrices at test time;
 * 2. its singular and non-finite cases (a rank-deficient matrix has no solution: result 0).
 */
import { execFileSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { solveInto } from "@/lib/control/linalg";
import { mulberry32, normal } from "../helpers/seeded-random";

describe("solveInto (Gaussian elimination with partial pivoting, allocation-free)", () => {
  it("equals numpy.linalg.solve on 200 seeded random systems (d = 1..8) to 1e-9 relative", () => {
    const g = normal(mulberry32(2412));
    const systems: { A: number[]; b: number[]; d: number }[] = [];
    for (let k = 0; k < 200; k++) {
      const d = 1 + (k % 8);
      systems.push({ d, A: Array.from({ length: d * d }, () => g()), b: Array.from({ length: d }, () => g()) });
    }
    const py = [
      "import json, sys, numpy as np",
      "s = json.load(sys.stdin)",
      "print(json.dumps([np.linalg.solve(np.array(x['A']).reshape(x['d'], x['d']), np.array(x['b'])).tolist() for x in s]))",
    ].join("\n");
    const ref = JSON.parse(execFileSync("python3", ["-c", py], { input: JSON.stringify(systems) }).toString()) as number[][];
    const work = new Float64Array(8 * 9);
    const x = new Float64Array(8);
    systems.forEach((s, k) => {
      const ratio = solveInto(Float64Array.from(s.A), Float64Array.from(s.b), s.d, work, x);
      expect(ratio, `system ${k}`).toBeGreaterThan(0);
      expect(ratio).toBeLessThanOrEqual(1);
      const scale = Math.max(...ref[k]!.map(Math.abs));
      ref[k]!.forEach((v, i) => expect(Math.abs(x[i]! - v), `system ${k}, x[${i}]`).toBeLessThanOrEqual(1e-9 * scale));
    });
  });

  it("reports a rank-deficient, a zero and a non-finite matrix as unsolved (0) and a well-conditioned diagonal with ratio min/max pivot", () => {
    const work = new Float64Array(12);
    const x = new Float64Array(3);
    // row 3 = row 1 + row 2: rank 2
    expect(solveInto(Float64Array.from([1, 2, 3, 4, 5, 6, 5, 7, 9]), Float64Array.from([1, 2, 3]), 3, work, x)).toBe(0);
    expect(solveInto(new Float64Array(9), Float64Array.from([1, 2, 3]), 3, work, x)).toBe(0);
    expect(solveInto(Float64Array.from([1, 0, 0, 0, NaN, 0, 0, 0, 1]), Float64Array.from([1, 2, 3]), 3, work, x)).toBe(0);
    // diag(2, 8, 4): partial pivoting leaves a diagonal in place; pivots 2, 8, 4, ratio 2 / 8
    expect(solveInto(Float64Array.from([2, 0, 0, 0, 8, 0, 0, 0, 4]), Float64Array.from([2, 8, 4]), 3, work, x)).toBeCloseTo(0.25, 15);
    expect(Array.from(x)).toEqual([1, 1, 1]);
  });
});
