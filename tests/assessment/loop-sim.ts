/**
 * A small closed-loop simulator for the assessment tests: a first-order-plus-dead-time (or
 * integrating) plant, discretised exactly for a zero-order hold (x+ = a x + (1 - a) K u,
 * a = e^{-T/τ}), a velocity-form PI, measurement noise, an AR(1) load disturbance, an optional
 * outside sinusoid (on PV) or square-wave load (at the plant input), manual stretches and a
 * sticking valve by the two-parameter data-driven model of Choudhury, Thornhill & Shah (Control
 * Eng. Practice 13, 2005; S = dead band + stick band, J = slip jump; simplified from memory).
 * Invented data, for tests only.
 */
import { Prng } from "@/simulators/prng";
import { parseLoopConfig, type AssessSample, type LoopConfig } from "@/lib/assessment";

export interface SimOptions {
  seed: number;
  n: number;
  T?: number;
  K?: number;
  tauS?: number;
  deadS?: number;
  integrating?: boolean;
  kp: number;
  ti: number | null;
  noise?: number;
  /** Load disturbance: AR(1) pole and innovation sigma (PV % units). */
  loadPole?: number;
  loadSigma?: number;
  sine?: { amplitude: number; periodS: number };
  /** Square-wave load at the plant input (MV %), e.g. a feed switched between two rates. */
  squareLoad?: { amplitude: number; periodS: number };
  stiction?: { S: number; J: number };
  /** [start, end) sample ranges in manual (MV held). */
  manual?: [number, number][];
  spSteps?: { at: number; sp: number }[];
  sp0?: number;
  mvLo?: number;
  mvHi?: number;
  mv0?: number;
}

export function simulateLoop(o: SimOptions): AssessSample[] {
  const rng = new Prng(o.seed);
  const T = o.T ?? 1;
  const K = o.K ?? 1;
  const tau = o.tauS ?? 20;
  const dead = Math.round((o.deadS ?? 2) / T);
  const a = Math.exp(-T / tau);
  const noise = o.noise ?? 0.1;
  const loadPole = o.loadPole ?? 0.99;
  const loadSigma = o.loadSigma ?? 0.05;
  const mvLo = o.mvLo ?? 0;
  const mvHi = o.mvHi ?? 100;
  let sp = o.sp0 ?? 50;
  let u = o.mv0 ?? 50;
  let x = o.integrating ? sp : K * u; // plant state in PV %
  let load = 0;
  const uHist: number[] = new Array<number>(dead + 1).fill(u);
  let valve = u;
  let stuck = true;
  let us = u;
  let lastDu = 0;
  let prevU = u;
  let prevE = 0;
  const out: AssessSample[] = [];
  const steps = [...(o.spSteps ?? [])].sort((p, q) => p.at - q.at);
  for (let k = 0; k < o.n; k++) {
    while (steps.length && steps[0]!.at <= k) sp = steps.shift()!.sp;
    load = loadPole * load + loadSigma * rng.normal();
    const sine = o.sine ? o.sine.amplitude * Math.sin((2 * Math.PI * k * T) / o.sine.periodS) : 0;
    const pv = x + load + sine + noise * rng.normal();
    const manual = (o.manual ?? []).some(([s, e]) => k >= s && k < e);
    const e = sp - pv;
    if (!manual) {
      const du = o.kp * (e - prevE) + (o.ti ? (o.kp * T * e) / o.ti : 0);
      u = Math.min(mvHi, Math.max(mvLo, u + du));
    }
    prevE = e;
    out.push({ t: k * T, sp, pv, mv: u, mode: manual ? "manual" : "auto" });
    // Valve (Choudhury et al. 2005, simplified).
    if (o.stiction) {
      const { S, J } = o.stiction;
      const du = u - prevU;
      if (stuck) {
        if (Math.abs(u - us) > S) {
          stuck = false;
          valve = u - Math.sign(u - us) * (S - J) / 2;
        }
      } else if (du === 0 || Math.sign(du) !== Math.sign(lastDu)) {
        stuck = true;
        us = u;
      } else valve = u - Math.sign(du) * (S - J) / 2;
      if (du !== 0) lastDu = du;
    } else valve = u;
    prevU = u;
    uHist.push(valve);
    const ud = uHist.shift()! + (o.squareLoad ? o.squareLoad.amplitude * Math.sign(Math.sin((2 * Math.PI * (k + 0.5) * T) / o.squareLoad.periodS)) : 0);
    if (o.integrating) x += (T * K * (ud - 50)) / tau;
    else x = a * x + (1 - a) * K * ud;
  }
  return out;
}

/**
 * The raw LOOP.json of a simulated flow loop (span 0-100, 1 s, dead time 2 s) with a PI controller
 * (Kp 0.5, Ti 15 s); `controller` overrides fields of the controller, `o` fields of the loop.
 */
export function flowLoopJson(tag: string, o: Record<string, unknown> = {}, controller: Record<string, unknown> = {}): Record<string, unknown> {
  return {
    tag,
    kind: "flow",
    units: "m3/h",
    pvLo: 0,
    pvHi: 100,
    samplePeriodS: 1,
    deadTimeS: 2,
    normalMode: "auto",
    controller: { kp: 0.5, ti: 15, td: 0, action: "reverse", mvLo: 0, mvHi: 100, ...controller },
    ...o,
  };
}

/** LOOP.json of the simulated loop with a PI controller of the given tuning. */
export function simulatedLoopConfig(kp: number, ti: number | null): LoopConfig {
  return parseLoopConfig(flowLoopJson("FIC-311", {}, { kp, ti }));
}

/**
 * Noise through a stable AR(2) filter of damping ζ and natural frequency ωn·T (rad per sample):
 * poles r·e^(±jθ) with r = e^(−ζωnT), θ = ωnT·√(1−ζ²) (Box, Jenkins & Reinsel). The first
 * `burnIn` samples are dropped so the start-up transient is gone.
 */
export function ar2Noise(rng: Prng, n: number, zeta: number, wnT: number, burnIn: number): Float64Array {
  const r = Math.exp(-zeta * wnT);
  const th = wnT * Math.sqrt(1 - zeta * zeta);
  const a1 = -2 * r * Math.cos(th);
  const a2 = r * r;
  const x = new Float64Array(n + burnIn);
  for (let k = 2; k < x.length; k++) x[k] = -a1 * x[k - 1]! - a2 * x[k - 2]! + rng.normal();
  return x.subarray(burnIn);
}

/**
 * Keeps every `every`-th point and replays the record by linear interpolation at 1 s (the
 * simulator's sample period: the replayed times are the kept point's plus 0, 1, … s), as an
 * export of a historian's dead-band storage roughly does (common practice).
 */
export function compressEvery(s: readonly AssessSample[], every: number): AssessSample[] {
  const out: AssessSample[] = [];
  for (let i = 0; i + every < s.length; i += every) {
    const a = s[i]!;
    const b = s[i + every]!;
    for (let k = 0; k < every; k++) out.push({ ...a, t: a.t + k, pv: a.pv + ((b.pv - a.pv) * k) / every, mv: a.mv + ((b.mv - a.mv) * k) / every });
  }
  return out;
}

/**
 * The points a dead-band (exception) historian stores, each with its own time, as a "raw values"
 * export gives them: the first, every sample whose PV or MV has moved more than its band since the
 * last stored one, and the last (common practice in historians).
 */
export function storeByException(s: readonly AssessSample[], pvBand: number, mvBand: number): AssessSample[] {
  const out: AssessSample[] = [s[0]!];
  for (let i = 1; i < s.length - 1; i++) {
    const last = out[out.length - 1]!;
    if (Math.abs(s[i]!.pv - last.pv) > pvBand || Math.abs(s[i]!.mv - last.mv) > mvBand) out.push(s[i]!);
  }
  if (s.length > 1) out.push(s[s.length - 1]!);
  return out;
}

/** Set-point steps of about 5 % at irregular intervals of 0.7–1.3 × `every` samples (a regular square wave would read as an outside cycle). */
export function irregularSetPointSteps(n: number, every: number): { at: number; sp: number }[] {
  const out: { at: number; sp: number }[] = [];
  for (let k = every, i = 0; k < n; i++, k += Math.round(every * (0.7 + 0.6 * ((i * 0.618) % 1)))) out.push({ at: k, sp: i % 2 === 0 ? 55 : 50 - (i % 3) });
  return out;
}
