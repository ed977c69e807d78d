/**
 * The Harris index read at SIMC's tight closed-loop time instead of at the bare dead time: the
 * sluggish sign of the minimum-variance benchmark (diagnosis.ts, rule 8).
 *
 * Why. The Harris index (Harris 1989; harris.ts) weighs the error's variance against a controller
 * that removes every disturbance right after the dead time θ. A PI cannot do that on a process
 * with lags (the benchmark is out of its reach; Jelali's survey, Control Eng. Practice 14, 2006,
 * from memory), and a configured dead time is often the transport delay alone, shorter than the
 * effective delay θ + τ2/2 that tuning rules work with (Skogestad's half rule, J. Process Control
 * 13, 2003, from memory): on the cross-check set a well-tuned loop on a second-order or level
 * process read 3–14× minimum variance (docs/assessment-rounds.md, "Cross-check misses" and
 * "Sluggishness against the extended horizon").
 *
 * What. The extended-horizon index of Thornhill, Oettinger & Fedenczuk (J. Process Control 9,
 * 1999, from memory): the same FCOR sums over a prediction horizon h longer than the delay,
 * σ²_y / σ²_h with σ²_h = σ²_a Σ_{k<h} f_k², the variance left by a controller that removes each
 * disturbance only after h. The horizon here is θ + τc with SIMC's tight setting τc = θ
 * (Skogestad 2003: τc = θ is the tightest choice with good robustness, from memory), i.e. 2θ:
 * no PI tuned for robustness removes a disturbance faster. A loop is read as slow by this sign
 * only when its variance is still more than SLUGGISH_INDEX times what such a controller leaves;
 * since σ²_h ≥ σ²_mv, that implies the Harris index above the same limit, so the sign is the old
 * one with a second condition, never a new finding. The reported Harris index is unchanged.
 *
 * What it cannot do: a lag much longer than θ still reads slow, since the process's lags are not
 * identifiable from routine closed-loop data (Ljung 1999, sec. 13.4); the remedy stays the dead
 * time a step test shows (docs/assessment.md, "Which dead time").
 */

/** SIMC's tight closed-loop time constant in dead times (Skogestad 2003, from memory). */
export const TIGHT_TAU_C = 1;
/** The index above which a loop without oscillation reads sluggish (a well-tuned PI is within 1–3 of minimum variance; common practice, from memory). */
export const SLUGGISH_INDEX = 3;

/**
 * The extended horizon in samples for a dead time θ at grid period T, as harris.ts counts the
 * delay (θ/T + 1 for a zero-order hold): (θ + τc)/T + 1 with τc = TIGHT_TAU_C·θ.
 */
export function extendedHorizonSamples(deadTimeS: number, T: number): number {
  return Math.floor(((1 + TIGHT_TAU_C) * deadTimeS) / T) + 1;
}

/**
 * The Harris sign of sluggishness: the index above SLUGGISH_INDEX at the dead time and at the
 * extended horizon. Without an extended figure (not computed) the Harris index alone decides.
 */
export function harrisSlow(harris: number | null, extended: number | null | undefined): boolean {
  if (harris === null || !(harris > SLUGGISH_INDEX)) return false;
  return extended === null || extended === undefined || extended > SLUGGISH_INDEX;
}

/** The evidence line of the extended-horizon index beside a Harris index above the limit. */
export function extendedLine(harris: number | null, extended: number | null | undefined, fmt: (v: number, d?: number) => string): string | null {
  if (harris === null || !(harris > SLUGGISH_INDEX) || extended === null || extended === undefined) return null;
  const against = `variance ${fmt(extended, 1)}× what a controller that removes each disturbance within two dead times leaves (extended-horizon index at θ + τc, SIMC's tight τc = θ; Thornhill, Oettinger & Fedenczuk 1999, Skogestad 2003)`;
  return extended > SLUGGISH_INDEX
    ? `${against}: slow even against the tightest robust tuning`
    : `${against}: within ${SLUGGISH_INDEX}×, so the high Harris index alone does not show slowness (a PI cannot reach minimum variance on a process with lags, and a configured transport delay can leave a lag out)`;
}
