/**
 * The allocation-free solver of the recursive estimators (lib/control/linalg.ts `solveInto`;
 * `shiftIn` has its own test in ./lag-vector.test.ts):
 * 1. `solveInto` against numpy.linalg.solve (Debian python3-numpy, LAPACK gesv) on 200 seeded
 *    random systems of sizes 1-8, computed from the same matrices at test time;
 * 2. its singular and non-finite cases (a rank-deficient matrix has no solution: result 0);
 * 3. `nearestPsd` (the IV covariance's projection) against numpy.linalg.eigh with the negative
 *    eigenvalues set to zero, on seeded symmetric matrices that are positive definite (returned
 *    as they are) and indefinite (Jacobi).
 */
import { execFileSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { nearestPsd, solveInto } from "@/lib/control/linalg";
import { mulberry32, normal } from "../helpers/seeded-random";
import { PYTHON } from "../helpers/python";

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
    const ref = JSON.parse(execFileSync(PYTHON, ["-c", py], { input: JSON.stringify(systems) }).toString()) as number[][];
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

  it("nearestPsd equals numpy's eigendecomposition with negative eigenvalues clipped, on 60 seeded 2x2 to 5x5 matrices (half of them positive definite)", () => {
    const g = normal(mulberry32(77));
    const cases: { d: number; S: number[] }[] = [];
    for (let k = 0; k < 60; k++) {
      const d = 2 + (k % 4);
      const B = Array.from({ length: d * d }, () => g());
      // B B' + 0.1 I (positive definite) or (B + B') / 2 (indefinite as a rule)
      const S = Array.from({ length: d * d }, (_, ij) => {
        const [i, j] = [Math.floor(ij / d), ij % d];
        if (k % 2 === 1) return (B[i * d + j]! + B[j * d + i]!) / 2;
        let s = i === j ? 0.1 : 0;
        for (let m = 0; m < d; m++) s += B[i * d + m]! * B[j * d + m]!;
        return s;
      });
      cases.push({ d, S });
    }
    const py = [
      "import json, sys, numpy as np",
      "out = []",
      "for x in json.load(sys.stdin):",
      "    w, v = np.linalg.eigh(np.array(x['S']).reshape(x['d'], x['d']))",
      "    out.append([(v @ np.diag(np.maximum(w, 0)) @ v.T).ravel().tolist(), float(w.min())])",
      "print(json.dumps(out))",
    ].join("\n");
    const ref = JSON.parse(execFileSync(PYTHON, ["-c", py], { input: JSON.stringify(cases) }).toString()) as [number[], number][];
    let indefinite = 0;
    cases.forEach((c, k) => {
      const [want, minEig] = ref[k]!;
      if (minEig < 0) indefinite++;
      const got = nearestPsd(Float64Array.from(c.S), c.d);
      const scale = Math.max(...want.map(Math.abs));
      want.forEach((v, i) => expect(Math.abs(got[i]! - v), `case ${k}, entry ${i}`).toBeLessThanOrEqual(1e-12 * scale));
    });
    expect(indefinite).toBeGreaterThanOrEqual(25);
  });
});
