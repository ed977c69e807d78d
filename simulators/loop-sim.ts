/**
 * One simulated control loop in closed loop: the plant (discrete state space from `plant.ts`),
 * the loop's own PI/PID (`discretePid` of lib/control, run in velocity form with the MV clamped
 * to its limits, so the integral cannot wind up), a valve (optionally sticking, by the model of
 * `valve-stiction.ts`), measurement
 * noise, load disturbances, set-point moves, spells in manual and the scenario's drifts.
 * Deterministic for a given seed. Stepping is synchronous: a test steps N samples directly,
 * the process runner steps by the wall clock.
 *
 * Internally every signal is in % of its span; samples leave in engineering units.
 */
import { discretePidOf } from "@/lib/control/closed-loop";
import { shiftIn } from "@/lib/control/lag-vector";
import type { Complex, QTf } from "@/lib/control/types";
import { slugify } from "@/lib/domain/slug";
import type { LoopMode } from "@/lib/domain/types";
import { velocityForm } from "./controller";
import { eigenvalues } from "./eigen";
import { closedLoopStateMatrix, criticalGainFactor } from "./loop-analysis";
import { discretisePlant, type DiscreteStateSpace } from "./plant";
import { Prng } from "./prng";
import type { ActivitySpec, ControllerSpec, DriftSpec, PlantSpec } from "./scenario";
import { StictionValve } from "./valve-stiction";

export interface LoopSimConfig {
  tenantSlug: string;
  siteSlug: string;
  tag: string;
  /** Topic segment of the loop (defaults to slugify(tag)). */
  slug?: string;
  /** Database id when the loop comes from the database (for tests and load runs). */
  loopId?: number;
  telemetryPeriodS: number;
  controllerPeriodS: number;
  plant: PlantSpec;
  controller: ControllerSpec;
  pvRange: [number, number];
  mvRange: [number, number];
  /** MV limits, % of MV span. */
  mvLimitsPct: [number, number];
  /** Initial set point, % of PV span. */
  spPct: number;
  /** MV at the operating point, % of MV span. */
  mvPct: number;
  activity: ActivitySpec;
  drift: DriftSpec[];
  seed: number;
}

/** One simulated sample in engineering units, stamped with simulated time (s from start). */
export interface SimSample {
  simTimeS: number;
  sp: number;
  pv: number;
  mv: number;
  mode: LoopMode;
}

/**
 * The PV reading's limits in % of span: a 4–20 mA transmitter's measuring range, 3.8–20.5 mA
 * (NAMUR NE 43, from memory); beyond it the signal means a fault, not a reading.
 */
export const TRANSMITTER_RANGE_PCT: readonly [number, number] = [-1.25, 103.125];

function clamp(v: number, lo: number, hi: number): number {
  return v < lo ? lo : v > hi ? hi : v;
}

export { velocityForm } from "./controller";

export class LoopSim {
  readonly config: LoopSimConfig;
  readonly slug: string;
  readonly Tc: number;
  /** Controller steps per telemetry sample (>= 1). */
  readonly stepsPerSample: number;
  readonly plant: DiscreteStateSpace;
  readonly controller: QTf;
  private readonly vf: { n: Float64Array; d: Float64Array };
  private readonly rng: Prng;
  private readonly x: Float64Array;
  private readonly xNext: Float64Array;
  private readonly eHist: Float64Array;
  private readonly vHist: Float64Array;
  /** Extra dead time from dead-time-growth: a FIFO of plant inputs (ring buffer). */
  private readonly extraBuf: Float64Array;
  private extraHead = 0;
  private extraDelay = 0;
  private k = 0;
  private u: number;
  private valve: number;
  private stiction: StictionValve | null = null;
  private sp: number;
  private readonly spBase: number;
  private loadStep = 0;
  private loadWalk = 0;
  private loadDrift = 0;
  private mode: LoopMode = "auto";
  private manualUntilK = -1;
  private manualMv: number | null = null;
  private frozenPv: number | null = null;
  private lastPvPct: number;

  constructor(config: LoopSimConfig) {
    this.config = config;
    this.slug = config.slug ?? slugify(config.tag);
    this.Tc = config.controllerPeriodS;
    this.stepsPerSample = Math.max(1, Math.round(config.telemetryPeriodS / config.controllerPeriodS));
    this.plant = discretisePlant(config.plant, this.Tc);
    this.controller = discretePidOf(config.controller, this.Tc);
    this.vf = velocityForm(this.controller);
    this.rng = new Prng(config.seed);
    this.x = new Float64Array(this.plant.n);
    this.xNext = new Float64Array(this.plant.n);
    this.eHist = new Float64Array(this.vf.n.length);
    this.vHist = new Float64Array(Math.max(0, this.vf.d.length - 1));
    let maxExtra = 0;
    for (const d of config.drift) if (d.kind === "dead-time-growth") maxExtra = Math.max(maxExtra, Math.ceil(d.addS / this.Tc) + 1);
    this.extraBuf = new Float64Array(maxExtra + 1);
    this.u = config.mvPct;
    this.valve = config.mvPct;
    this.sp = config.spPct;
    this.spBase = config.spPct;
    this.lastPvPct = config.spPct;
  }

  /** Simulated time of the next step, seconds. */
  get simTimeS(): number {
    return this.k * this.Tc;
  }

  /** Process gain multiplier at simulated time t (gain-creep drifts). */
  gainFactor(t = this.simTimeS): number {
    let g = 1;
    for (const d of this.config.drift) {
      if (d.kind !== "gain-creep" || t < d.startS) continue;
      const f = d.durationS <= 0 ? 1 : Math.min(1, (t - d.startS) / d.durationS);
      g *= 1 + (this.creepTarget(d) - 1) * f;
    }
    return g;
  }

  private readonly creepTargets = new Map<DriftSpec, number>();

  /** End gain multiplier of a gain-creep drift (`toHeadroom` resolved against this loop's own critical gain). */
  private creepTarget(d: Extract<DriftSpec, { kind: "gain-creep" }>): number {
    let v = this.creepTargets.get(d);
    if (v === undefined) {
      v = d.toFactor ?? (d.toHeadroom ?? 1) * this.criticalGainFactor();
      this.creepTargets.set(d, v);
    }
    return v;
  }

  /**
   * The process-gain multiplier at which the loop (as configured, no drift) reaches the unit
   * circle (see `criticalGainFactor` in loop-analysis.ts).
   */
  criticalGainFactor(): number {
    return criticalGainFactor(this.plant, this.controller);
  }

  /** Extra dead time in controller samples at simulated time t (dead-time-growth drifts). */
  extraDelaySamples(t = this.simTimeS): number {
    let s = 0;
    for (const d of this.config.drift) {
      if (d.kind !== "dead-time-growth" || t < d.startS) continue;
      const f = d.durationS <= 0 ? 1 : Math.min(1, (t - d.startS) / d.durationS);
      s += d.addS * f;
    }
    return Math.min(this.extraBuf.length - 1, Math.round(s / this.Tc));
  }

  private activeDrift<K extends DriftSpec["kind"]>(kind: K, t: number): Extract<DriftSpec, { kind: K }> | null {
    for (const d of this.config.drift) {
      if (d.kind !== kind || t < d.startS) continue;
      const dur = d.kind === "manual-switch" || d.kind === "frozen-sensor" || d.kind === "saturation" || d.kind === "outside-oscillation" ? d.durationS : null;
      if (dur !== null && t >= d.startS + dur) continue;
      return d as Extract<DriftSpec, { kind: K }>;
    }
    return null;
  }

  /** Random background events (load steps, set-point moves, spells in manual) for one step. */
  private backgroundEvents(): void {
    const a = this.config.activity;
    const Tc = this.Tc;
    const rng = this.rng;
    if (a.loadStepEveryS > 0 && rng.chance(Tc / a.loadStepEveryS)) this.loadStep = rng.normal() * a.loadStepSdPct;
    if (a.loadWalkSdPct > 0) this.loadWalk = 0.999 * this.loadWalk + rng.normal() * a.loadWalkSdPct * Math.sqrt(Tc);
    if (a.setpointEveryS > 0 && rng.chance(Tc / a.setpointEveryS)) {
      this.sp = clamp(this.spBase + rng.normal() * a.setpointSdPct, 5, 95);
    }
    if (a.manualEveryS > 0 && this.manualUntilK < this.k && rng.chance(Tc / a.manualEveryS)) {
      this.manualUntilK = this.k + Math.round(a.manualDurationS / Tc);
    }
  }

  /** Advance one controller period; returns a sample when a telemetry sample is due. */
  step(): SimSample | null {
    const cfg = this.config;
    const t = this.simTimeS;
    this.backgroundEvents();
    const plant = this.plant;
    const n = plant.n;

    // drifts at this instant
    const g = this.gainFactor(t);
    this.extraDelay = this.extraDelaySamples(t);
    const sat = this.activeDrift("saturation", t);
    this.loadDrift = sat ? sat.loadPct : 0;
    const outside = this.activeDrift("outside-oscillation", t);
    if (outside) this.loadDrift += outside.amplitudePct * Math.sin((2 * Math.PI * (t - outside.startS)) / outside.periodS);
    const man = this.activeDrift("manual-switch", t);
    const frozen = this.activeDrift("frozen-sensor", t);
    const sticky = this.activeDrift("sticky-valve", t);

    // measurement
    let yTrue = plant.D * 0;
    for (let i = 0; i < n; i++) yTrue += plant.C[i]! * this.x[i]!;
    const pvTrue = this.spBase + yTrue;
    // the transmitter reads only inside its signal range: past it (a loop beyond the rim, a large
    // load) the reading sits at the range end while the process goes on
    let pvMeas = clamp(pvTrue + this.rng.normal() * cfg.activity.noiseSdPct, TRANSMITTER_RANGE_PCT[0], TRANSMITTER_RANGE_PCT[1]);
    if (frozen) {
      if (this.frozenPv === null) this.frozenPv = this.lastPvPct;
      pvMeas = this.frozenPv;
    } else {
      this.frozenPv = null;
    }
    this.lastPvPct = pvMeas;

    // mode
    const manualNow = man !== null || this.manualUntilK >= this.k;
    const e = this.sp - pvMeas;
    shiftIn(this.eHist, e);
    const [lo, hi] = cfg.mvLimitsPct;
    if (manualNow) {
      if (this.mode !== "manual") this.manualMv = this.u;
      this.mode = "manual";
      if (man) {
        const since = t - man.startS;
        for (const mv of man.moves) if (since >= mv.afterS) this.manualMv = mv.mvPct;
      }
      const uNew = clamp(this.manualMv ?? this.u, lo, hi);
      this.vHist.fill(0);
      this.u = uNew;
    } else {
      this.mode = "auto";
      this.manualMv = null;
      const N = this.vf.n;
      const Dp = this.vf.d;
      let v = 0;
      for (let i = 0; i < N.length; i++) v += N[i]! * this.eHist[i]!;
      for (let i = 1; i < Dp.length; i++) v -= Dp[i]! * this.vHist[i - 1]!;
      shiftIn(this.vHist, v);
      // velocity form with the MV clamped: the integral cannot wind up past a limit
      this.u = clamp(this.u + v, lo, hi);
    }

    // valve: the two-parameter stiction model (Choudhury, Thornhill & Shah, Control Eng. Practice 13, 2005)
    if (sticky) {
      if (!this.stiction || this.stiction.S !== sticky.stictionPct || this.stiction.J !== sticky.slipPct) {
        this.stiction = new StictionValve({ S: sticky.stictionPct, J: sticky.slipPct }, this.valve);
      }
      this.valve = this.stiction.update(this.u);
    } else {
      this.stiction = null;
      this.valve = this.u;
    }

    // plant input (deviation from the operating point), through the extra dead time
    const w = g * (this.valve - cfg.mvPct + this.loadStep + this.loadWalk + this.loadDrift);
    const L = this.extraBuf.length;
    this.extraBuf[this.extraHead] = w;
    const wIn = this.extraDelay > 0 ? this.extraBuf[(this.extraHead - this.extraDelay + L) % L]! : w;
    this.extraHead = (this.extraHead + 1) % L;
    const A = plant.A;
    for (let i = 0; i < n; i++) {
      let s = plant.B[i]! * wIn;
      for (let j = 0; j < n; j++) s += A[i * n + j]! * this.x[j]!;
      this.xNext[i] = s;
    }
    this.x.set(this.xNext);

    const due = this.k % this.stepsPerSample === 0;
    this.k++;
    if (!due) return null;
    const [pvLo, pvHi] = cfg.pvRange;
    const [mvLo, mvHi] = cfg.mvRange;
    return {
      simTimeS: t,
      sp: pvLo + ((pvHi - pvLo) * this.sp) / 100,
      pv: pvLo + ((pvHi - pvLo) * pvMeas) / 100,
      mv: mvLo + ((mvHi - mvLo) * this.u) / 100,
      mode: this.mode,
    };
  }

  /** Step until `count` telemetry samples have been produced; returns them. */
  samples(count: number): SimSample[] {
    const out: SimSample[] = [];
    while (out.length < count) {
      const s = this.step();
      if (s) out.push(s);
    }
    return out;
  }

  /** Step until simulated time reaches `simTimeS`; returns the samples produced. */
  advanceTo(simTimeS: number, out: SimSample[] = []): SimSample[] {
    while (this.simTimeS < simTimeS - 1e-9) {
      const s = this.step();
      if (s) out.push(s);
    }
    return out;
  }

  /** Current state of the drifts and the loop (for logs and tests). */
  status(): { simTimeS: number; gainFactor: number; extraDelaySamples: number; mode: LoopMode; mvPct: number; valvePct: number; spPct: number } {
    return {
      valvePct: this.valve,
      simTimeS: this.simTimeS,
      gainFactor: this.gainFactor(),
      extraDelaySamples: this.extraDelaySamples(),
      mode: this.mode,
      mvPct: this.u,
      spPct: this.sp,
    };
  }

  /**
   * The closed-loop state matrix at the current drift state, for the linear loop in auto
   * (see `closedLoopStateMatrix` in loop-analysis.ts).
   */
  closedLoopStateMatrix(g = this.gainFactor(), M = this.extraDelaySamples()): number[][] {
    return closedLoopStateMatrix(this.plant, this.controller, g, M);
  }
}

/**
 * The true closed-loop poles of a simulated loop at its current drift state (controller period):
 * the eigenvalues of `closedLoopStateMatrix()`. For TESTS ONLY: never published, never used by
 * the product.
 */
export function trueClosedLoopPoles(sim: LoopSim): Complex[] {
  return eigenvalues(sim.closedLoopStateMatrix());
}
