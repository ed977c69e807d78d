/**
 * Stiction tests asked between set-point moves (lib/assessment/stiction-setpoint.ts).
 *
 * - The autocorrelation pooled over constant-set-point stretches (each less its mean, the first
 *   `skip` samples after a move left out) against numpy's `correlate` (Debian's python3-numpy; the
 *   biased autocovariance and its pooling by stretch length are common practice).
 * - Loops of tests/assessment/loop-sim.ts (invented data; sticking valve after Choudhury,
 *   Thornhill & Shah, Control Eng. Practice 13, 2005, in loop-sim's own simplified code): a flow
 *   loop (PI Kc 0.5, Ti 15 s) whose set point steps by 10 % every 2,000 s, 20 seeds. The steps'
 *   transients hide the stick-slip cycle from the whole record's autocorrelation on about half the
 *   seeds; asked between the moves, the tests find the valve. The same loop with a linear valve is
 *   never called sticky. Thresholds ours, counts seen in brackets.
 */
import { spawnSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig } from "@/lib/assessment";
import { setPointRinging, setPointStretches } from "@/lib/assessment/stiction-setpoint";
import { Prng } from "@/simulators/prng";
import { ar2Noise, flowLoopJson, simulateLoop } from "./loop-sim";
import { PYTHON, pythonHas } from "../helpers/python";

const hasNumpy = pythonHas("numpy");

const NUMPY_POOLED = `
import json, sys
import numpy as np
d = json.load(sys.stdin)
x = np.array(d["x"]); L = d["maxLag"]
acc = np.zeros(L + 1)
for a, b in d["stretches"]:
    s = x[a:b] - x[a:b].mean()
    c = np.correlate(s, s, "full")[len(s) - 1:]
    acc[:min(L + 1, len(c))] += c[:L + 1]
r = acc / acc[0]
k = 1
while k <= L and r[k] > 0: k += 1
while k < L and r[k + 1] < r[k]: k += 1
print(json.dumps({"depth": r[k], "period": 2 * k}))
`;

describe("stiction tests between set-point moves", () => {
  it.skipIf(!hasNumpy)("the pooled autocorrelation's first trough matches numpy's correlate over the same stretches (depth within 1e-9, same lag)", () => {
    const rng = new Prng(11);
    const n = 6000;
    // a ringing AR(2) error (ζ 0.2, ωn·T 0.2: period about 32 samples) and a set point moved four times
    const e = ar2Noise(rng, n, 0.2, 0.2, 500);
    const sp = Float64Array.from({ length: n }, (_, i) => 40 + 5 * Math.floor(i / 1300));
    const include = new Uint8Array(n).fill(1);
    include.fill(0, 3000, 3100); // an open-loop spell splits one stretch
    const skip = 40;
    const got = setPointRinging(e, sp, include, 1e-6, skip);
    const stretches = setPointStretches(sp, include, 1e-6, skip)!;
    expect(stretches.length).toBe(6);
    const maxLag = Math.floor(Math.max(...stretches.map(([a, b]) => b - a)) / 3);
    const run = spawnSync(PYTHON, ["-c", NUMPY_POOLED], { input: JSON.stringify({ x: Array.from(e), stretches, maxLag }), encoding: "utf8" });
    expect(run.status, run.stderr).toBe(0);
    const ref = JSON.parse(run.stdout) as { depth: number; period: number };
    expect(got).not.toBeNull();
    expect(Math.abs(got!.depth - ref.depth)).toBeLessThan(1e-9);
    expect(got!.periodSamples).toBe(ref.period);
    expect(got!.depth).toBeLessThan(-0.15);
  });

  it("without a set-point move there are no stretches to pool (the whole record's autocorrelation already judged it)", () => {
    const n = 2000;
    expect(setPointStretches(new Float64Array(n).fill(50), new Uint8Array(n).fill(1), 1e-6, 0)).toBeNull();
  });

  const SEEDS = Array.from({ length: 20 }, (_, i) => i + 1);
  const spSteps = Array.from({ length: 9 }, (_, i) => ({ at: (i + 1) * 2000, sp: i % 2 === 0 ? 55 : 45 }));
  const assess = (seed: number, sticking: boolean) =>
    assessLoop(
      simulateLoop({ seed, n: 20000, kp: 0.5, ti: 15, noise: 0.05, loadSigma: 0.03, stiction: sticking ? { S: 2, J: 1 } : undefined, spSteps, sp0: 45 }),
      parseLoopConfig(flowLoopJson("FIC-2107", {}, { kp: 0.5, ti: 15 })),
    );

  it("a sticking valve (S 2 %, J 1 %) under set-point steps: valve-stiction in at least 17 of 20 (20 seen), at least 6 of them (10 seen) found only between the moves", () => {
    const reports = SEEDS.map((seed) => assess(seed, true));
    const found = reports.filter((r) => r.diagnosis.label === "valve-stiction");
    const between = found.filter((r) => r.stiction.evidence.some((l) => l.startsWith("between set-point moves the error rings")));
    expect(found.length, JSON.stringify(reports.map((r) => r.diagnosis.label))).toBeGreaterThanOrEqual(17);
    expect(between.length).toBeGreaterThanOrEqual(6);
    for (const r of between) expect(r.oscillation.detected).toBe(false);
  });

  it("the same loop with a linear valve is never called sticky (0 of 20 seen)", () => {
    const labels = SEEDS.map((seed) => assess(seed, false).diagnosis.label);
    expect(labels.filter((l) => l === "valve-stiction"), JSON.stringify(labels)).toHaveLength(0);
  });
});
