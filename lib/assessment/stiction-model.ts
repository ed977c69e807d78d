/**
 * The two-parameter data-driven valve stiction model of Choudhury, Thornhill & Shah, "Modelling
 * valve stiction", Control Engineering Practice 13 (2005) 641-658. Both parameters are in % of
 * valve travel:
 *   S = dead band + stick band: how far the controller output must travel, after the valve has
 *       come to rest and reversed, before the valve moves again;
 *   J = slip jump: how far the valve jumps when it breaks free.
 * J = 0 gives a pure dead band (backlash-like); S = J gives stick-slip with no dead band.
 *
 * The logic follows the model's flowchart (from memory): the valve sticks whenever the controller
 * output stops or reverses; from rest it breaks free when the output has moved by more than S
 * from the sticking point in the opposite direction of the last travel, or by more than J in the
 * same direction (only the stick band to overcome), and once moving it follows the output at an
 * offset of (S - J) / 2 against the direction of travel. Our choice where the paper is silent for
 * a noisy output: the sticking point is held while the valve is stuck (jitter of the output does
 * not reset it), since the force on a stuck stem builds from where it stopped.
 *
 * Used by the simulators (simulators/valve-stiction.ts) and by the model fit of stiction-fit.ts.
 */

export interface StictionParams {
  /** Dead band plus stick band, % of valve travel (>= 0). */
  S: number;
  /** Slip jump, % of valve travel (0 <= J <= S). */
  J: number;
}

export function checkStictionParams({ S, J }: StictionParams): void {
  if (!Number.isFinite(S) || S < 0) throw new RangeError(`stiction band S must be a finite number >= 0 (got ${S})`);
  if (!Number.isFinite(J) || J < 0) throw new RangeError(`slip jump J must be a finite number >= 0 (got ${J})`);
  if (J > S) throw new RangeError(`slip jump J (${J}) must not exceed the stiction band S (${S})`);
}

/** One controller output for `update` (JS runs one call at a time). */
const one = new Float64Array(1);

/** One sticking valve: feed it the controller output (% of travel) each controller period. */
export class StictionValve {
  readonly S: number;
  readonly J: number;
  /** Valve position, % of travel. */
  private y: number;
  /** Controller output at the previous call. */
  private xPrev: number;
  /** Controller output at which the valve came to rest (meaningful while stuck). */
  private xss: number;
  private stuck = true;
  /** Direction of the last travel (+1, -1; 0 before the first move). */
  private dir = 0;
  /** Travel limits, % (read once here: update runs per sample in the model fit's grid). */
  private readonly lo: number;
  private readonly hi: number;
  /** Number of slips (the valve broke free) since construction. */
  slips = 0;

  constructor(params: StictionParams, initialPct: number, travel: [number, number] = [0, 100]) {
    checkStictionParams(params);
    this.S = params.S;
    this.J = params.J;
    this.lo = travel[0];
    this.hi = travel[1];
    this.y = initialPct;
    this.xPrev = initialPct;
    this.xss = initialPct;
  }

  get position(): number {
    return this.y;
  }

  get isStuck(): boolean {
    return this.stuck;
  }

  /** Advance one period with controller output `x` (% of travel); returns the valve position. */
  update(x: number): number {
    one[0] = x;
    this.run(one, 0, 1, one);
    return one[0]!;
  }

  /**
   * Advance over the controller outputs xs[from..to), writing each position to out[i] (out may be
   * xs). The same steps as `update` per sample, with the valve's state in locals for the loop (the
   * model fit runs the valve over thousands of samples per candidate).
   */
  run(xs: ArrayLike<number>, from: number, to: number, out: { [i: number]: number }): void {
    const { lo, hi, S, J } = this;
    const half = (S - J) / 2;
    let { y, xPrev, xss, stuck, dir, slips } = this;
    // How far the output must move up / down from the sticking point to break the valve free:
    // in the direction of the last travel only the stick band J holds it, reversed S; at the
    // start (no travel yet) the valve rests mid dead band, so (S + J)/2 gives a jump of J.
    let up = dir === 0 ? (S + J) / 2 : dir > 0 ? J : S;
    let down = dir === 0 ? (S + J) / 2 : dir < 0 ? J : S;
    for (let i = from; i < to; i++) {
      let x = xs[i]!;
      x = x < lo ? lo : x > hi ? hi : x;
      // Moving on while the output keeps its direction; it stopped or reversed: the valve sticks
      // where it is.
      if (!stuck) {
        if (dir > 0 ? x > xPrev : x < xPrev) y = x - dir * half;
        else {
          stuck = true;
          xss = xPrev;
        }
      }
      if (stuck) {
        const d = x - xss;
        const s = d > up ? 1 : -d > down ? -1 : 0;
        if (s !== 0) {
          stuck = false;
          dir = s;
          up = s > 0 ? J : S;
          down = s < 0 ? J : S;
          y = x - s * half;
          slips++;
        }
      }
      y = y < lo ? lo : y > hi ? hi : y;
      xPrev = x;
      out[i] = y;
    }
    this.y = y;
    this.xPrev = xPrev;
    this.xss = xss;
    this.stuck = stuck;
    this.dir = dir;
    this.slips = slips;
  }
}
