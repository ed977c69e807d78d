/**
 * A closed-loop run that records what a historian export would hold (t, SP, PV, MV, mode,
 * quality) and, beside it, the simulator's truth (valve position, load, outside sinusoid, true
 * PV, fault mask) that the benchmark's own tests check the labels against.
 *
 * Same parts as the live simulators: the plant discretised by `plant.ts` (ZOH, fractional dead
 * time), the loop's PI/PID from `discretePid` in velocity form with the MV clamped to its limits,
 * the stiction model of `valve-stiction.ts`. The integer part of the dead time is a FIFO of plant
 * inputs (a day of a dead-time-dominant loop at 0.5 s would otherwise need a state per sample).
 * Internally every signal is in % of its span.
 */
import { discretePid } from "@/lib/control/closed-loop";
import { velocityForm } from "../loop-sim";
import { discretisePlant } from "../plant";
import { Prng } from "../prng";
import type { PlantSpec } from "../scenario";
import { StictionValve } from "../valve-stiction";

export type SampleMode = "auto" | "manual" | "cascade";
export type SampleQuality = "good" | "bad" | "uncertain";

export interface Spell {
  fromS: number;
  toS: number;
}

export interface RecordingSpec {
  seed: number;
  plant: PlantSpec;
  /** Controller period, s; the historian keeps every `every`-th value (a snapshot). */
  controllerPeriodS: number;
  every: number;
  samples: number;
  controller: { kp: number; ti: number | null; td: number; action: "reverse" | "direct"; form: "ideal" | "parallel" | "series" };
  mvLimitsPct: [number, number];
  mv0Pct: number;
  sp0Pct: number;
  spMoves: { atS: number; spPct: number }[];
  normalMode: "auto" | "cascade";
  /** Cascade: the set point from the master wanders (AR(1), sd % of span, time constant s). */
  spWander: { sdPct: number; tauS: number } | null;
  noiseSdPct: number;
  /** PV resolution, % of span (0 = none): an A/D converter or a historian's stored precision. */
  resolutionPct: number;
  load: {
    /** Filtered (AR(1)) noise at the plant input: sd % of MV span, time constant s. */
    arSdPct: number;
    arTauS: number;
    /** Leaky random walk: sd per square-root second, % of MV span. */
    walkSdPct: number;
    steps: { atS: number; pct: number }[];
    /** Load pulses that push the MV past a limit, ramping in and out over `rampS` (a load builds up; it rarely jumps by half the valve). */
    pulses: { fromS: number; toS: number; pct: number; rampS: number }[];
    sine: { amplitudePct: number; periodS: number; phase: number; harmonic2: number } | null;
  };
  /** Filtered noise added to the PV (an output disturbance), sd % of PV span, time constant s. */
  outputAr: { sdPct: number; tauS: number } | null;
  stiction: { S: number; J: number } | null;
  /**
   * Spells in manual: the operator's own moves (absolute MV), and optionally an operator who
   * looks every `everyS` and corrects when the PV is more than `bandPct` off the set point:
   * "incremental" moves the MV by gain x error, "proportional" sets it to mv0 + gain x error.
   */
  manual: (Spell & {
    moves: { atS: number; mvPct: number }[];
    operator?: { everyS: number; kind: "incremental" | "proportional"; gain: number; bandPct: number };
  })[];
  fault: {
    kind: "frozen" | "code" | "out-of-range";
    spells: Spell[];
    /** The value a failed transmitter reports (kind "code"), engineering units. */
    code: number;
    /** The controller holds its output while the PV is bad (kind "code"). */
    holdMv: boolean;
    /** Samples carry quality "bad" while the fault lasts. */
    flagQuality: boolean;
    /** Out of range: how fast the reading drifts away, % of span per s, and which way. */
    driftPctPerS: number;
  } | null;
  pvRange: [number, number];
  /** Samples without a mode column (the CSV contract makes it optional). */
  withMode: boolean;
}

export interface RecordedSample {
  t: number;
  sp: number;
  pv: number;
  mv: number;
  mode?: SampleMode;
  quality?: SampleQuality;
}

export interface RecordingTruth {
  /** Per sample, % of span: the controller output, the valve position, the total plant-input load, its sinusoidal part, the true PV. */
  mvPct: Float32Array;
  valvePct: Float32Array;
  loadPct: Float32Array;
  sinePct: Float32Array;
  pvTruePct: Float32Array;
  /** 1 where the PV reading is faulty. */
  fault: Uint8Array;
  slips: number;
}

const clamp = (v: number, lo: number, hi: number) => (v < lo ? lo : v > hi ? hi : v);
const inSpell = (t: number, s: Spell) => t >= s.fromS && t < s.toS;

/** Run the loop and record it. Deterministic for a given spec. */
export function simulateRecording(spec: RecordingSpec): { samples: RecordedSample[]; truth: RecordingTruth } {
  const Tc = spec.controllerPeriodS;
  const rng = new Prng(spec.seed);
  const delaySteps = Math.floor(spec.plant.deadTimeS / Tc + 1e-9);
  const frac = spec.plant.deadTimeS - delaySteps * Tc;
  const plant = discretisePlant({ ...spec.plant, deadTimeS: frac > 1e-9 * Tc ? frac : 0 }, Tc);
  const n = plant.n;
  const x = new Float64Array(n);
  const xn = new Float64Array(n);
  const fifo = new Float64Array(delaySteps + 1);
  let head = 0;
  const c = spec.controller;
  const vf = velocityForm(discretePid({ kp: c.kp, ti: c.ti ?? undefined, td: c.td, T: Tc, action: c.action, form: c.form }));
  const eHist = new Float64Array(vf.n.length);
  const vHist = new Float64Array(Math.max(0, vf.d.length - 1));
  const [lo, hi] = spec.mvLimitsPct;
  const valve = spec.stiction ? new StictionValve(spec.stiction, spec.mv0Pct) : null;
  const [pvLo, pvHi] = spec.pvRange;
  const span = pvHi - pvLo;
  const N = spec.samples;
  const samples: RecordedSample[] = new Array(N);
  const truth: RecordingTruth = {
    mvPct: new Float32Array(N),
    valvePct: new Float32Array(N),
    loadPct: new Float32Array(N),
    sinePct: new Float32Array(N),
    pvTruePct: new Float32Array(N),
    fault: new Uint8Array(N),
    slips: 0,
  };
  const L = spec.load;
  const arA = L.arTauS > 0 ? Math.exp(-Tc / L.arTauS) : 0;
  const arB = L.arSdPct * Math.sqrt(1 - arA * arA);
  const walkB = L.walkSdPct * Math.sqrt(Tc);
  const oA = spec.outputAr ? Math.exp(-Tc / spec.outputAr.tauS) : 0;
  const oB = spec.outputAr ? spec.outputAr.sdPct * Math.sqrt(1 - oA * oA) : 0;
  const wA = spec.spWander ? Math.exp(-Tc / spec.spWander.tauS) : 0;
  const wB = spec.spWander ? spec.spWander.sdPct * Math.sqrt(1 - wA * wA) : 0;
  let ar = 0;
  let walk = 0;
  let outAr = 0;
  let wander = 0;
  let u = spec.mv0Pct;
  let sp = spec.sp0Pct;
  let frozenAt: number | null = null;
  let drift = 0;
  let lastPv = spec.sp0Pct;
  let wasManual = false;
  let manualMv = u;
  let nextLook = Infinity;
  let movesDone = 0;
  const total = N * spec.every;
  for (let k = 0; k < total; k++) {
    const t = k * Tc;
    // set point
    for (const m of spec.spMoves) if (t >= m.atS) sp = m.spPct;
    if (spec.spWander) wander = wA * wander + wB * rng.normal();
    const spNow = clamp(sp + wander, 2, 98);
    // loads at the plant input
    ar = arA * ar + arB * rng.normal();
    walk = 0.9995 * walk + walkB * rng.normal();
    let load = ar + walk;
    for (const s of L.steps) if (t >= s.atS) load += s.pct;
    for (const p of L.pulses) if (t >= p.fromS && t < p.toS) load += p.pct * Math.min(1, (t - p.fromS) / p.rampS, (p.toS - t) / p.rampS);
    let sine = 0;
    if (L.sine) {
      const ph = (2 * Math.PI * t) / L.sine.periodS + L.sine.phase;
      sine = L.sine.amplitudePct * (Math.sin(ph) + L.sine.harmonic2 * Math.sin(2 * ph + 0.7));
      load += sine;
    }
    // measurement
    let y = 0;
    for (let i = 0; i < n; i++) y += plant.C[i]! * x[i]!;
    if (spec.outputAr) outAr = oA * outAr + oB * rng.normal();
    const pvTrue = spec.sp0Pct + y + outAr;
    // the transmitter's output ends a little past its range (NE 43 style, common practice)
    let pv = clamp(pvTrue + spec.noiseSdPct * rng.normal(), -2.5, 105);
    if (spec.resolutionPct > 0) pv = Math.round(pv / spec.resolutionPct) * spec.resolutionPct;
    let faulty = false;
    let bad = false;
    const f = spec.fault;
    if (f) {
      const spell = f.spells.find((s) => inSpell(t, s));
      if (f.kind === "frozen") {
        if (spell) {
          frozenAt ??= lastPv;
          pv = frozenAt;
          faulty = true;
        } else frozenAt = null;
      } else if (f.kind === "code" && spell) {
        faulty = true;
        bad = true;
      } else if (f.kind === "out-of-range" && spell) {
        drift += f.driftPctPerS * Tc;
        pv = clamp(pv + drift, -2.5, 105);
        faulty = true;
      }
    }
    const pvForController = bad ? ((f!.code - pvLo) / span) * 100 : pv;
    lastPv = pv;
    // mode and controller output
    const man = spec.manual.find((s) => inSpell(t, s));
    const hold = bad && f!.holdMv;
    if (man) {
      if (!wasManual) {
        manualMv = u;
        nextLook = t + (man.operator?.everyS ?? Infinity);
        movesDone = 0;
      }
      while (movesDone < man.moves.length && t >= man.moves[movesDone]!.atS) manualMv = man.moves[movesDone++]!.mvPct;
      const op = man.operator;
      if (op && t >= nextLook) {
        nextLook += op.everyS;
        const e = (spNow - pv) * (c.action === "reverse" ? 1 : -1);
        if (Math.abs(e) > op.bandPct) manualMv = op.kind === "incremental" ? manualMv + op.gain * e : spec.mv0Pct + op.gain * e;
      }
      u = clamp(manualMv, lo, hi);
      vHist.fill(0);
      eHist.fill(0);
    } else if (!hold) {
      const e = spNow - pvForController;
      for (let i = eHist.length - 1; i > 0; i--) eHist[i] = eHist[i - 1]!;
      eHist[0] = e;
      let v = 0;
      for (let i = 0; i < vf.n.length; i++) v += vf.n[i]! * eHist[i]!;
      for (let i = 1; i < vf.d.length; i++) v -= vf.d[i]! * vHist[i - 1]!;
      for (let i = vHist.length - 1; i > 0; i--) vHist[i] = vHist[i - 1]!;
      if (vHist.length > 0) vHist[0] = v;
      u = clamp(u + v, lo, hi);
    }
    wasManual = man !== undefined;
    const pos = valve ? valve.update(u) : u;
    // plant, through the dead time
    fifo[head] = pos - spec.mv0Pct + load;
    const w = fifo[(head + 1) % fifo.length]!;
    head = (head + 1) % fifo.length;
    const A = plant.A;
    for (let i = 0; i < n; i++) {
      let s = plant.B[i]! * w;
      for (let j = 0; j < n; j++) s += A[i * n + j]! * x[j]!;
      xn[i] = s;
    }
    x.set(xn);
    if (k % spec.every !== 0) continue;
    const j = k / spec.every;
    const s: RecordedSample = {
      t,
      sp: pvLo + (span * spNow) / 100,
      pv: bad ? f!.code : pvLo + (span * pv) / 100,
      mv: u,
    };
    if (spec.withMode) s.mode = man ? "manual" : spec.normalMode;
    if (f?.flagQuality) s.quality = bad || (faulty && f.kind !== "frozen") ? "bad" : "good";
    samples[j] = s;
    truth.mvPct[j] = u;
    truth.valvePct[j] = pos;
    truth.loadPct[j] = load;
    truth.sinePct[j] = sine;
    truth.pvTruePct[j] = pvTrue;
    truth.fault[j] = faulty ? 1 : 0;
  }
  truth.slips = valve?.slips ?? 0;
  return { samples, truth };
}
