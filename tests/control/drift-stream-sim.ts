/**
 * A synthetic stream of the drift-shape tool (./drift-shape.ts) for its seeded checks: the ARX(1,1,1)
 * plant x(k) = 0.8 x(k-1) + b(t) u(k-1), b(t) = 0.5 + b1 s + b2 s^2 with s = t / n (t = k seconds),
 * white u (open loop), instruments the delayed inputs [u(k-1), u(k-2)] (uncorrelated with the noise),
 * and either an equation error e(k) + 0.8 e(k-1) (`noise: "equation"`, y = x + that filtered
 * through the plant) or white output noise (`noise: "output"`, y = x + e: the equation error is
 * (1 - 0.8 q^-1) e); e white with sd `sd`. One informative run, with a gap at `gapAt` if given.
 */
import type { DriftStream } from "./drift-shape";
import { mulberry32, normal } from "../helpers/seeded-random";

export function simulatedStream(seed: number, n: number, o: { b1: number; b2?: number; sd: number; noise: "equation" | "output"; gapAt?: number }): DriftStream {
  const rand = normal(mulberry32(seed));
  const t: number[] = [], v: number[] = [];
  let y1 = 0, x1 = 0, u1 = 0, u2 = 0, e1 = 0;
  for (let k = 0; k < n; k++) {
    const e = o.sd * rand();
    const s = k / n;
    const b = 0.5 + o.b1 * s + (o.b2 ?? 0) * s * s;
    const x = 0.8 * x1 + b * u1;
    const y = o.noise === "equation" ? 0.8 * y1 + b * u1 + e + 0.8 * e1 : x + e;
    t.push(k);
    v.push(-y1, u1, u1, u2, y, 1);
    [u2, u1, y1, x1, e1] = [u1, rand(), y, x, e];
  }
  const events = new Map<number, string[]>(o.gapAt !== undefined ? [[o.gapAt, ["g"]]] : []);
  const opts = { na: 1, nb: 1, nk: 1, T: 1, memoryS: 50, windowS: n, controller: { num: [0.5], den: [1], T: 1 }, instrumentThreshold: 0, lags: 3 };
  return { seed, truth: null, o: opts, t, v, events, tracker: null };
}
