/**
 * Controller settings for the benchmark loops and the margins that say how they really behave.
 *
 * Tuning: the SIMC rules of Skogestad, "Simple analytic rules for model reduction and PID
 * controller tuning", J. Process Control 13 (2003) 291-309 (from memory): first order plus dead
 * time K e^{-theta s}/(tau s + 1): Kc = tau / (K (tauC + theta)), Ti = min(tau, 4 (tauC + theta));
 * integrating k' e^{-theta s}/s: Kc = 1 / (k' (tauC + theta)), Ti = 4 (tauC + theta); underdamped
 * second order K/(tau0^2 s^2 + 2 zeta tau0 s + 1): Kc = 2 zeta tau0 / (K (tauC + theta)),
 * Ti = min(2 zeta tau0, 4 (tauC + theta)), Td = tau0 / (2 zeta) (ideal form, the zeros cancel the
 * plant's poles). A digital controller adds about half its period of dead time (common practice).
 *
 * Margins: gain and phase margin of the continuous loop C(jw) G(jw) e^{-jw theta_eff}, found on the
 * unwrapped phase (common practice); used to state the truth of a recording (healthy, aggressive,
 * sluggish) independently of any classifier.
 */
import type { PlantSpec } from "../scenario";

export interface PidSetting {
  kp: number;
  ti: number;
  td: number;
}

export interface Margins {
  /** Gain margin (Infinity when the phase never reaches -180 deg below the Nyquist frequency). */
  gm: number;
  /** Phase margin, degrees (null when |L| never reaches 1). */
  pmDeg: number | null;
  /** Gain crossover frequency, rad/s (null when |L| never reaches 1). */
  wc: number | null;
}

/** Effective dead time of the digital loop: transport delay plus half the controller period. */
export function effectiveDeadTime(plant: PlantSpec, controllerPeriodS: number): number {
  const lag = plant.type === "integrating" ? plant.lagS : 0;
  return plant.deadTimeS + controllerPeriodS / 2 + lag;
}

/** SIMC settings for closed-loop time constant tauC (s). */
export function simcTuning(plant: PlantSpec, tauC: number, controllerPeriodS: number): PidSetting {
  const theta = effectiveDeadTime(plant, controllerPeriodS);
  const g = Math.abs(plant.gain);
  switch (plant.type) {
    case "first-order":
      return { kp: plant.timeConstantS / (g * (tauC + theta)), ti: Math.min(plant.timeConstantS, 4 * (tauC + theta)), td: 0 };
    case "integrating":
      return { kp: 1 / (g * (tauC + theta)), ti: 4 * (tauC + theta), td: 0 };
    case "second-order": {
      const tau0 = 1 / plant.naturalFrequency;
      const z = plant.zeta;
      return { kp: (2 * z * tau0) / (g * (tauC + theta)), ti: Math.min(2 * z * tau0, 4 * (tauC + theta)), td: tau0 / (2 * z) };
    }
  }
}

/** |L(jw)| and the unwrapped phase of L(jw) (rad) for an ideal PID with derivative filter Td/10. */
export function loopResponse(plant: PlantSpec, c: PidSetting, controllerPeriodS: number, w: number): { mag: number; phase: number } {
  // controller: Kc (1 + 1/(j w Ti) + j w Td / (1 + j w Td/10))
  const tf = c.td / 10;
  const dRe = (c.td * w * (tf * w)) / (1 + (tf * w) ** 2);
  const dIm = (c.td * w) / (1 + (tf * w) ** 2);
  const re = c.kp * (1 + dRe);
  const im = c.kp * (dIm - (c.ti > 0 ? 1 / (w * c.ti) : 0));
  let mag = Math.hypot(re, im);
  let phase = Math.atan2(im, re);
  const g = Math.abs(plant.gain);
  switch (plant.type) {
    case "first-order":
      mag *= g / Math.hypot(1, w * plant.timeConstantS);
      phase -= Math.atan(w * plant.timeConstantS);
      break;
    case "second-order": {
      const wn = plant.naturalFrequency;
      mag *= (g * wn * wn) / Math.hypot(wn * wn - w * w, 2 * plant.zeta * wn * w);
      phase -= Math.atan2(2 * plant.zeta * wn * w, wn * wn - w * w);
      break;
    }
    case "integrating":
      mag *= g / (w * Math.hypot(1, w * plant.lagS));
      phase -= Math.PI / 2 + Math.atan(w * plant.lagS);
      break;
  }
  phase -= w * (plant.deadTimeS + controllerPeriodS / 2);
  return { mag, phase };
}

/** Gain and phase margins from a log-spaced scan refined by bisection, up to the Nyquist frequency. */
export function loopMargins(plant: PlantSpec, c: PidSetting, controllerPeriodS: number): Margins {
  const wMax = Math.PI / controllerPeriodS;
  const wMin = wMax * 1e-7;
  const steps = 1400;
  const at = (w: number) => loopResponse(plant, c, controllerPeriodS, w);
  const refine = (a: number, b: number, f: (w: number) => number) => {
    for (let i = 0; i < 60; i++) {
      const m = Math.sqrt(a * b);
      if (f(a) * f(m) <= 0) b = m;
      else a = m;
    }
    return Math.sqrt(a * b);
  };
  let gm = Infinity;
  let wc: number | null = null;
  let prevW = wMin;
  let prev = at(wMin);
  for (let i = 1; i <= steps; i++) {
    const w = wMin * Math.pow(wMax / wMin, i / steps);
    const cur = at(w);
    if (wc === null && prev.mag >= 1 && cur.mag < 1) wc = refine(prevW, w, (x) => at(x).mag - 1);
    if (gm === Infinity && prev.phase > -Math.PI && cur.phase <= -Math.PI) {
      const w180 = refine(prevW, w, (x) => at(x).phase + Math.PI);
      gm = 1 / at(w180).mag;
    }
    prevW = w;
    prev = cur;
  }
  const pmDeg = wc === null ? null : (180 / Math.PI) * (at(wc).phase + Math.PI);
  return { gm, pmDeg, wc };
}

/** Amplitude ratio from a sinusoidal load at the plant input to the PV in closed loop, |G / (1 + L)|. */
export function loadToPvGain(plant: PlantSpec, c: PidSetting, controllerPeriodS: number, w: number): number {
  const L = loopResponse(plant, c, controllerPeriodS, w);
  const G = loopResponse(plant, { kp: 1, ti: 0, td: 0 }, controllerPeriodS, w);
  const re = 1 + L.mag * Math.cos(L.phase);
  const im = L.mag * Math.sin(L.phase);
  return G.mag / Math.hypot(re, im);
}
