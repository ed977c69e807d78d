/**
 * What makes each benchmark label: the controller, the loads, the valve, the mode and the sensor
 * of a recording, drawn at random around a loop from `loops.ts`. The label is how the data were
 * made; where a practitioner could not tell from the data, the case is labelled `undetermined`
 * and names the verdicts that would still be fair (`alsoAccept`).
 */
import { deriveSeed, Prng } from "../prng";
import { drawLoop, drawTiming, logUniform, pick, type DrawnLoop, type PlantType } from "./loops";
import type { RecordingSpec } from "./recording-sim";
import { effectiveDeadTime, loadToPvGain, loopMargins, simcTuning, type Margins, type PidSetting } from "./tuning";

export const LABELS = ["healthy", "aggressive-tuning", "sluggish-tuning", "valve-stiction", "external-disturbance", "saturated", "sensor-fault", "manual"] as const;
export type BenchLabel = (typeof LABELS)[number] | "undetermined";
export type BorderlineKind = "too-short" | "faint-stiction" | "faint-disturbance" | "moderate-tuning";
export const BORDERLINE: BorderlineKind[] = ["too-short", "faint-stiction", "faint-disturbance", "moderate-tuning"];

export interface CaseDraw {
  label: BenchLabel;
  alsoAccept: BenchLabel[];
  /** What was generated, in a sentence (for the bench's listing of misses). */
  note: string;
  loop: DrawnLoop;
  spec: RecordingSpec;
  tuning: PidSetting;
  /** The SIMC tuning at tauC = theta the tuning is judged against, and both loops' margins. */
  reference: PidSetting;
  margins: Margins;
  referenceMargins: Margins;
  deadTimeKnown: boolean;
}

const r3 = (v: number) => Number(v.toPrecision(3));

/** Healthy SIMC tuning: tauC between 1 and 2.5 effective dead times, softened until GM >= 2.2. */
function healthyTuning(rng: Prng, loop: DrawnLoop, Tc: number): PidSetting {
  const theta = effectiveDeadTime(loop.plant, Tc);
  let tauC = theta * rng.uniform(1, 2.5);
  let c = simcTuning(loop.plant, tauC, Tc);
  for (let i = 0; i < 20 && loopMargins(loop.plant, c, Tc).gm < 2.2; i++) {
    tauC *= 1.3;
    c = simcTuning(loop.plant, tauC, Tc);
  }
  return c;
}

/** Scale the gain so the gain margin is `gm` (the phase of a PI/PID does not depend on Kc). */
function withGainMargin(loop: DrawnLoop, c: PidSetting, Tc: number, gm: number): PidSetting {
  const now = loopMargins(loop.plant, c, Tc).gm;
  return { ...c, kp: (c.kp * now) / gm };
}

function baseSpec(rng: Prng, seed: number, loop: DrawnLoop, timing: ReturnType<typeof drawTiming>, c: PidSetting): RecordingSpec {
  const dur = timing.samples * timing.T;
  const tcl = effectiveDeadTime(loop.plant, timing.Tc) * 3 + loop.timescaleS * 0.5;
  const nSteps = Math.floor(rng.uniform(2, 12));
  const spMoves = rng.chance(0.3)
    ? Array.from({ length: Math.floor(rng.uniform(2, 8)) }, () => ({ atS: rng.uniform(0.05, 0.95) * dur, spPct: r3(rng.uniform(35, 65)) })).sort((a, b) => a.atS - b.atS)
    : [];
  const cascade = rng.chance(0.12);
  return {
    seed,
    plant: loop.plant,
    controllerPeriodS: timing.Tc,
    every: timing.every,
    samples: timing.samples,
    controller: { kp: c.kp, ti: c.ti, td: c.td, action: loop.plant.gain > 0 ? "reverse" : "direct", form: c.td > 0 ? "ideal" : pick(rng, ["ideal", "series"] as const) },
    mvLimitsPct: pick(rng, [[0, 100], [0, 100], [5, 95], [10, 100]] as [number, number][]),
    mv0Pct: r3(rng.uniform(30, 65)),
    sp0Pct: r3(rng.uniform(35, 65)),
    spMoves: cascade ? [] : spMoves,
    normalMode: cascade ? "cascade" : "auto",
    spWander: cascade ? { sdPct: rng.uniform(1, 4), tauS: tcl * rng.uniform(5, 30) } : null,
    noiseSdPct: logUniform(rng, 0.03, 0.6),
    resolutionPct: rng.chance(0.3) ? pick(rng, [0.01, 0.02, 0.05]) : 0,
    load: {
      arSdPct: logUniform(rng, 0.3, 3),
      arTauS: tcl * logUniform(rng, 0.3, 5),
      walkSdPct: rng.chance(0.5) ? logUniform(rng, 0.002, 0.02) : 0,
      steps: Array.from({ length: nSteps }, () => ({ atS: rng.uniform(0.03, 0.97) * dur, pct: rng.normal() * rng.uniform(1, 5) })),
      pulses: [],
      sine: null,
    },
    outputAr: rng.chance(0.3) ? { sdPct: logUniform(rng, 0.05, 0.5), tauS: tcl * logUniform(rng, 0.2, 3) } : null,
    stiction: null,
    manual: [],
    fault: null,
    pvRange: loop.instrument.pvRange,
    withMode: rng.chance(0.8),
  };
}

/** Contiguous spells covering about `share` of [0, dur), in `count` pieces, not touching the start. */
function spells(rng: Prng, dur: number, share: number, count: number): { fromS: number; toS: number }[] {
  const len = (share * dur) / count;
  const gap = ((1 - share) * dur) / (count + 1);
  return Array.from({ length: count }, (_, i) => {
    const from = gap * (i + 1) * rng.uniform(0.7, 1.3) + len * i;
    return { fromS: from, toS: Math.min(dur, from + len) };
  });
}

/** Operator moves for a manual spell: every 15-90 minutes a correction toward the set point plus a random nudge. */
function operatorMoves(rng: Prng, spell: { fromS: number; toS: number }, mv0: number): { atS: number; mvPct: number }[] {
  const out: { atS: number; mvPct: number }[] = [];
  let mv = mv0;
  for (let t = spell.fromS + rng.uniform(300, 1800); t < spell.toS; t += rng.uniform(900, 5400)) {
    mv = Math.min(95, Math.max(5, mv + rng.normal() * rng.uniform(1, 6)));
    out.push({ atS: t, mvPct: r3(mv) });
  }
  return out;
}

export function drawCase(rng: Prng, seed: number, label: BenchLabel, plantType: PlantType, borderline?: BorderlineKind): CaseDraw {
  const loop = drawLoop(rng, plantType);
  // 2-24 h, and at least about 60 settling times of the plant where a day allows it (a verdict
  // on tuning or a cycle needs many of them; the too-short borderline cases are the exception)
  const settleH = (60 * (loop.plant.deadTimeS + loop.timescaleS)) / 3600;
  const hours = borderline === "too-short" ? 0 : Math.min(24, Math.max(logUniform(rng, 2, 24), settleH));
  let timing = drawTiming(rng, loop.timescaleS, hours, 80_000);
  const reference = simcTuning(loop.plant, effectiveDeadTime(loop.plant, timing.Tc), timing.Tc);
  let c = healthyTuning(rng, loop, timing.Tc);
  let alsoAccept: BenchLabel[] = [];
  let note = "";
  if (label === "aggressive-tuning") {
    c = withGainMargin(loop, { ...reference, ti: reference.ti * rng.uniform(0.3, 0.7) }, timing.Tc, rng.uniform(1.25, 1.7));
    note = "gain and integral action far above SIMC";
  } else if (label === "sluggish-tuning") {
    const f = rng.uniform(0.07, 0.25);
    c = { kp: reference.kp * f, ti: reference.ti * Math.max(3, 1.5 / f) * rng.uniform(1, 2), td: 0 };
    note = `gain x${f.toFixed(2)} of SIMC, integral time much longer`;
  } else if (borderline === "moderate-tuning") {
    c = withGainMargin(loop, { ...reference, ti: reference.ti * 0.8 }, timing.Tc, rng.uniform(1.9, 2.2));
    note = "between healthy and aggressive (gain margin about 2)";
    alsoAccept = ["healthy", "aggressive-tuning"];
  }
  if (borderline === "too-short") {
    // a slow loop recorded for about one to three closed-loop settling times
    const settle = 4 * (effectiveDeadTime(loop.plant, timing.Tc) * 2 + loop.timescaleS);
    timing = { ...timing, samples: Math.max(60, Math.round((settle * rng.uniform(0.5, 1.5)) / timing.T)) };
    note = `only ${Math.round((timing.samples * timing.T) / 60)} min of a loop that settles in about ${Math.round(settle / 60)} min`;
    alsoAccept = ["healthy"];
  }
  const spec = baseSpec(rng, seed, loop, timing, c);
  const dur = spec.samples * timing.T;
  const ref = { plant: loop.plant, c, Tc: timing.Tc };
  switch (borderline ?? label) {
    case "valve-stiction":
    case "faint-stiction": {
      const faint = borderline === "faint-stiction";
      const S = faint ? rng.uniform(0.1, 0.4) : logUniform(rng, 1, 8);
      const J = loop.plantType === "integrating" && !faint ? S * rng.uniform(0, 1) : S * rng.uniform(faint ? 0.2 : 0.3, 1);
      spec.stiction = { S: r3(S), J: r3(J) };
      // measurement noise through the controller jitters the MV by about kp x noise x sqrt 2 a
      // step; a valve dithered past its band by noise does not show stiction, so keep it below S/4
      if (!faint) spec.noiseSdPct = Math.min(spec.noiseSdPct, S / (4 * Math.SQRT2 * c.kp * (1 + c.td / timing.Tc)));
      // the stick-slip cycle is the loop's main feature: loads smaller than the band
      if (!faint) spec.load = { ...spec.load, arSdPct: Math.min(spec.load.arSdPct, S / 2), steps: spec.load.steps.map((x) => ({ ...x, pct: Math.max(-S, Math.min(S, x.pct)) })) };
      note = `sticking valve S = ${S.toFixed(2)} %, J = ${J.toFixed(2)} %`;
      if (faint) {
        spec.noiseSdPct = Math.max(spec.noiseSdPct, 0.3);
        alsoAccept = ["valve-stiction", "healthy"];
      }
      break;
    }
    case "external-disturbance":
    case "faint-disturbance": {
      const faint = borderline === "faint-disturbance";
      const tcl = effectiveDeadTime(loop.plant, timing.Tc) * 4 + (loop.plantType === "integrating" ? loop.timescaleS : 0);
      const period = Math.min(dur / 20, tcl * logUniform(rng, 3, 40));
      const target = (faint ? rng.uniform(0.6, 1.2) : rng.uniform(3, 8)) * Math.max(spec.noiseSdPct, 0.15);
      const gain = loadToPvGain(ref.plant, ref.c, ref.Tc, (2 * Math.PI) / period);
      const amplitudePct = Math.min(25, target / gain);
      spec.load.sine = { amplitudePct: r3(amplitudePct), periodS: r3(period), phase: rng.uniform(0, 2 * Math.PI), harmonic2: rng.chance(0.3) ? rng.uniform(0.1, 0.3) : 0 };
      if (!faint && loop.plantType !== "integrating" && rng.chance(0.4)) {
        const from = rng.uniform(0.2, 0.7) * dur;
        spec.manual = [{ fromS: from, toS: from + Math.max(4 * period, 0.06 * dur), moves: [] }];
      }
      note = `outside sinusoid of ${period.toFixed(0)} s, PV amplitude about ${(amplitudePct * gain).toFixed(2)} % of span`;
      if (faint) alsoAccept = ["external-disturbance", "healthy"];
      break;
    }
    case "saturated": {
      const share = rng.uniform(0.4, 0.75);
      const count = pick(rng, [1, 1, 2]);
      // a constant set point: the MV the load calls for is then known
      spec.spMoves = [];
      spec.spWander = null;
      spec.normalMode = "auto";
      const pieces = spells(rng, dur, share, count);
      const up = rng.chance(0.5);
      const [lo, hi] = spec.mvLimitsPct;
      const len = pieces[0]!.toS - pieces[0]!.fromS;
      const g = Math.abs(loop.plant.gain);
      // the PV settles off its set point by gain x excess: keep it inside the span (a PV pinned at
      // a range end would read as a failed transmitter)
      const below = Math.sign(loop.plant.gain) * (up ? 1 : -1) > 0;
      const room = below ? spec.sp0Pct - 5 : 95 - spec.sp0Pct;
      let excess = loop.plantType === "integrating" ? Math.min(15, (0.6 * room) / (g * len)) : rng.uniform(3, Math.min(25, (0.6 * room) / g));
      if (loop.plantType === "integrating") {
        // small loads so the level drifts within its span while the MV is pinned
        spec.load = { ...spec.load, arSdPct: Math.min(spec.load.arSdPct, excess / 3), walkSdPct: 0, steps: [] };
      } else {
        spec.load = { ...spec.load, steps: spec.load.steps.map((x) => ({ ...x, pct: x.pct * 0.3 })) };
        excess = Math.min(Math.max(excess, 2.5 * spec.load.arSdPct), (0.7 * room) / g);
      }
      // noise through the controller (derivative with a filter of Td/10 passes it x11) jitters the
      // pinned output off its limit; keep that jitter well inside the excess
      const jitterPerNoise = Math.SQRT2 * c.kp * (c.td > 0 ? 11 : 1);
      spec.noiseSdPct = Math.min(spec.noiseSdPct, excess / (4 * jitterPerNoise));
      const pct = up ? -(hi - spec.mv0Pct + excess) : spec.mv0Pct - lo + excess;
      const rampS = Math.min(0.3 * len, Math.max(0.05 * len, 10 * (loop.plant.deadTimeS + loop.timescaleS)));
      spec.load.pulses = pieces.map((p) => ({ ...p, pct, rampS }));
      note = `load beyond the MV range (${excess.toFixed(1)} % past the ${up ? "high" : "low"} limit) for ${(share * 100).toFixed(0)} % of the time`;
      break;
    }
    case "sensor-fault": {
      const kind = pick(rng, ["frozen", "code", "out-of-range"] as const);
      const pieces = kind === "out-of-range" ? [{ fromS: rng.uniform(0.3, 0.7) * dur, toS: dur }] : spells(rng, dur, rng.uniform(0.15, 0.5), pick(rng, [1, 2, 3]));
      const first = pieces[0]!;
      const rate = (pick(rng, [-1, 1]) * rng.uniform(40, 120)) / ((first.toS - first.fromS) * 0.3);
      spec.fault = {
        kind,
        spells: pieces,
        code: pick(rng, [-9999, -999.9, -99999, -32768, 99999]),
        holdMv: rng.chance(0.5),
        flagQuality: kind !== "frozen" && rng.chance(0.5),
        driftPctPerS: rate,
      };
      note = `sensor ${kind} for ${((pieces.reduce((s, p) => s + p.toS - p.fromS, 0) / dur) * 100).toFixed(0)} % of the time`;
      break;
    }
    case "manual": {
      const share = rng.uniform(0.6, 1);
      const from = share > 0.97 ? 0 : rng.uniform(0, 1 - share) * dur;
      const spell = { fromS: from, toS: from + share * dur };
      const g = Math.abs(loop.plant.gain);
      const integrating = loop.plantType === "integrating";
      // an operator of a fast level looks more often than one of a slow temperature
      const everyS = Math.min(integrating ? Math.max(60, 3 / g) : Infinity, Math.max(60, rng.uniform(600, 3600) * Math.min(1, dur / 36_000)));
      spec.manual = [
        {
          ...spell,
          moves: integrating ? [] : operatorMoves(rng, spell, spec.mv0Pct),
          // an operator keeps the level roughly in place (a proportional correction; an incremental
          // one on an integrating plant would cycle), nudges a self-regulating loop back toward SP
          operator: integrating
            ? { everyS, kind: "proportional", gain: 0.5 / (g * everyS), bandPct: rng.uniform(1, 5) }
            : { everyS, kind: "incremental", gain: rng.uniform(0.2, 0.6) / g, bandPct: rng.uniform(1, 5) },
        },
      ];
      // most exports of a loop in manual carry the mode; a quarter do not, and then only the
      // output's long flat stretches with rare steps tell it (a separate stream keeps the other draws)
      spec.withMode = new Prng(deriveSeed(seed, "mode-column")).chance(0.75);
      if (integrating) spec.load = { ...spec.load, arSdPct: Math.min(spec.load.arSdPct, 1), walkSdPct: 0, steps: spec.load.steps.map((x) => ({ ...x, pct: x.pct * 0.1 })) };
      note = `in manual ${(share * 100).toFixed(0)} % of the time`;
      break;
    }
    default:
      break;
  }
  if (label === "healthy" && rng.chance(0.2) && loop.plantType !== "integrating") {
    const from = rng.uniform(0.1, 0.8) * dur;
    spec.manual = [{ fromS: from, toS: from + 0.02 * dur, moves: [] }];
    note = "healthy, one short spell in manual";
  }
  if (!note) note = label;
  return {
    label: borderline ? "undetermined" : label,
    alsoAccept,
    note,
    loop,
    spec,
    tuning: c,
    reference,
    margins: loopMargins(loop.plant, c, timing.Tc),
    referenceMargins: loopMargins(loop.plant, reference, timing.Tc),
    deadTimeKnown: rng.chance(0.5),
  };
}
