/**
 * Step-test data for the tests, from plants whose continuous parameters are the truth:
 * a first-order-plus-dead-time plant K e^{-Ls}/(tau s + 1) driven by MV steps, evaluated in
 * closed form by superposing step responses y(t) = K du (1 - e^{-(t - t_i - L)/tau}) for
 * t > t_i + L (the textbook first-order step response; checked against scipy.signal in
 * identify.test.ts). Noise: seeded Gaussian (tests/helpers/seeded-random.ts).
 */
import { mulberry32, normal } from "../helpers/seeded-random";

export interface Fopdt {
  K: number;
  tau: number;
  L: number;
}

export interface MvStep {
  t: number;
  du: number;
}

/** PV deviation at time t (seconds) for MV steps `steps` applied to a plant at rest. */
export function fopdtAt(p: Fopdt, steps: readonly MvStep[], t: number): number {
  let y = 0;
  for (const s of steps) {
    const x = t - s.t - p.L;
    if (x > 0) y += s.du * p.K * (1 - Math.exp(-x / p.tau));
  }
  return y;
}

export function mvAt(mv0: number, steps: readonly MvStep[], t: number): number {
  let u = mv0;
  for (const s of steps) if (t >= s.t) u += s.du;
  return u;
}

export interface CsvOptions {
  plant: Fopdt;
  steps: MvStep[];
  mv0: number;
  pv0: number;
  T: number;
  duration: number;
  noiseStd?: number;
  seed?: number;
  mode?: string;
  header?: string;
}

/** A CSV log t,mv,pv[,mode] sampled every T seconds from 0 to duration. */
export function stepTestCsv(o: CsvOptions): string {
  const randn = normal(mulberry32(o.seed ?? 1));
  const lines = [o.header ?? (o.mode ? "t,mv,pv,mode" : "t,mv,pv")];
  const n = Math.round(o.duration / o.T);
  for (let k = 0; k <= n; k++) {
    const t = k * o.T;
    const pv = o.pv0 + fopdtAt(o.plant, o.steps, t) + (o.noiseStd ?? 0) * randn();
    const mv = mvAt(o.mv0, o.steps, t);
    lines.push(`${Number(t.toFixed(6))},${mv},${pv.toFixed(6)}${o.mode ? "," + o.mode : ""}`);
  }
  return lines.join("\n") + "\n";
}
