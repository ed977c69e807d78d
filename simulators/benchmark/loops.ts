/**
 * Random invented loops for the benchmark: a plant of one of four types with the instrument
 * around it (kind, units, span, tag), a historian sample period, a controller period and a
 * recording length. Every draw comes from the recording's own seeded generator.
 */
import type { Prng } from "../prng";
import type { PlantSpec } from "../scenario";

export type PlantType = "self-regulating" | "second-order" | "integrating" | "dead-time-dominant";
export const PLANT_TYPES: PlantType[] = ["self-regulating", "second-order", "integrating", "dead-time-dominant"];
export type LoopKind = "flow" | "level" | "pressure" | "temperature" | "other";

export interface Instrument {
  kind: LoopKind;
  units: string;
  pvRange: [number, number];
  tag: string;
  description: string;
}

export interface DrawnLoop {
  plantType: PlantType;
  plant: PlantSpec;
  instrument: Instrument;
  /** A time scale of the plant (s): what sampling and recording length are judged against. */
  timescaleS: number;
}

export function pick<T>(rng: Prng, xs: readonly T[]): T {
  return xs[Math.floor(rng.next() * xs.length)]!;
}

export function logUniform(rng: Prng, lo: number, hi: number): number {
  return Math.exp(rng.uniform(Math.log(lo), Math.log(hi)));
}

const round = (v: number, digits = 3) => Number(v.toPrecision(digits));

const INSTRUMENTS: Record<LoopKind, { prefix: string[]; units: [string, [number, number]][]; what: string[] }> = {
  flow: {
    prefix: ["FIC", "FC"],
    units: [["m3/h", [0, 120]], ["kg/h", [0, 5000]], ["L/min", [0, 400]], ["t/h", [0, 60]], ["Nm3/h", [0, 1500]]],
    what: ["Feed flow to settler", "Wash water flow", "Recycle flow to evaporator", "Fuel gas flow to kiln burner", "Slurry flow to thickener", "Solvent make-up flow"],
  },
  level: {
    prefix: ["LIC", "LC"],
    units: [["%", [0, 100]], ["m", [0, 3.2]], ["mm", [0, 2500]]],
    what: ["Surge drum level", "Flash vessel level", "Condensate pot level", "Clarifier well level", "Deaerator level", "Reflux drum level"],
  },
  pressure: {
    prefix: ["PIC", "PC"],
    units: [["kPa", [0, 600]], ["barg", [0, 16]], ["mbar", [-50, 50]], ["psig", [0, 250]]],
    what: ["Steam header pressure", "Scrubber inlet draft", "Compressor suction pressure", "Nitrogen blanket pressure", "Filter press feed pressure"],
  },
  temperature: {
    prefix: ["TIC", "TC"],
    units: [["degC", [0, 150]], ["degC", [50, 350]], ["K", [273, 473]], ["degF", [32, 400]]],
    what: ["Kiln outlet temperature", "Dryer exhaust temperature", "Jacket water temperature", "Reboiler outlet temperature", "Pasteuriser hold temperature"],
  },
  other: {
    prefix: ["AIC", "QIC"],
    units: [["pH", [0, 14]], ["ppm", [0, 500]], ["%", [0, 25]]],
    what: ["Effluent pH", "Dissolved oxygen in aeration basin", "Product moisture", "Stack oxygen"],
  },
};

function instrument(rng: Prng, kind: LoopKind): Instrument {
  const def = INSTRUMENTS[kind];
  const [units, base] = pick(rng, def.units);
  // spans vary by plant: scale the full-scale value, keep a live zero where there is one
  const scale = pick(rng, [0.5, 1, 1, 2, 4]);
  const pvRange: [number, number] = base[0] < 0 ? [base[0] * scale, base[1] * scale] : [base[0], round(base[0] + (base[1] - base[0]) * scale)];
  const area = 100 + Math.floor(rng.next() * 800);
  return { kind, units, pvRange, tag: `${pick(rng, def.prefix)}-${area}${Math.floor(rng.next() * 10)}`, description: pick(rng, def.what) };
}

/** A random plant of the given type, in % PV per % MV; the sign of the gain varies. */
export function drawLoop(rng: Prng, plantType: PlantType): DrawnLoop {
  const sign = rng.chance(0.2) ? -1 : 1;
  switch (plantType) {
    case "self-regulating": {
      const kind = pick(rng, ["flow", "flow", "pressure", "temperature"] as const);
      const [tLo, tHi, thetaFrac] = kind === "flow" ? [1, 8, [0.05, 0.4]] : kind === "pressure" ? [5, 60, [0.05, 0.3]] : [60, 900, [0.05, 0.3]];
      const tau = round(logUniform(rng, tLo, tHi));
      const plant: PlantSpec = { type: "first-order", gain: sign * round(rng.uniform(0.5, 2)), timeConstantS: tau, deadTimeS: round(tau * rng.uniform(thetaFrac[0]!, thetaFrac[1]!)) };
      return { plantType, plant, instrument: instrument(rng, kind), timescaleS: tau };
    }
    case "second-order": {
      const kind = pick(rng, ["pressure", "flow", "other"] as const);
      const tau0 = round(logUniform(rng, 0.8, 40));
      const plant: PlantSpec = {
        type: "second-order",
        gain: sign * round(rng.uniform(0.5, 1.8)),
        naturalFrequency: round(1 / tau0, 4),
        zeta: round(rng.uniform(0.25, 0.7), 2),
        deadTimeS: round(tau0 * rng.uniform(0.05, 0.5)),
      };
      return { plantType, plant, instrument: instrument(rng, kind), timescaleS: tau0 };
    }
    case "integrating": {
      // rate gain: level change (% of span per s) per % of valve; a residence time of 1-50 minutes
      const residence = logUniform(rng, 60, 3000);
      const plant: PlantSpec = {
        type: "integrating",
        gain: sign * round(1 / residence, 3),
        lagS: rng.chance(0.5) ? round(residence * rng.uniform(0.005, 0.03)) : 0,
        deadTimeS: round(residence * rng.uniform(0.002, 0.02)),
      };
      return { plantType, plant, instrument: instrument(rng, "level"), timescaleS: residence / 10 };
    }
    case "dead-time-dominant": {
      const kind = pick(rng, ["temperature", "other", "flow"] as const);
      const tau = round(kind === "flow" ? logUniform(rng, 1, 6) : logUniform(rng, 10, 300));
      const plant: PlantSpec = { type: "first-order", gain: sign * round(rng.uniform(0.5, 2)), timeConstantS: tau, deadTimeS: round(tau * rng.uniform(1.5, 5)) };
      return { plantType, plant, instrument: instrument(rng, kind), timescaleS: tau + plant.deadTimeS };
    }
  }
}

const PERIODS = [0.1, 0.2, 0.5, 1, 2, 5];

/**
 * Historian sample period (most often a few per plant time scale, sometimes coarse), the
 * controller period (a divisor of it, fast enough for the plant) and the number of samples for a
 * recording of about `hours`, capped at `maxSamples`.
 */
export function drawTiming(rng: Prng, timescaleS: number, hours: number, maxSamples = 90_000): { T: number; Tc: number; every: number; samples: number } {
  const fits = PERIODS.filter((p) => p <= timescaleS / 4);
  const T = fits.length === 0 ? 0.1 : rng.chance(0.15) ? fits[fits.length - 1]! : pick(rng, fits.slice(-3));
  const Tc = [1, 0.5, 0.2, 0.1].find((c) => c <= T && c <= Math.max(0.1, timescaleS / 10) && Math.abs(T / c - Math.round(T / c)) < 1e-9) ?? 0.1;
  const every = Math.round(T / Tc);
  const samples = Math.min(maxSamples, Math.round((hours * 3600) / T));
  return { T, Tc, every, samples };
}
