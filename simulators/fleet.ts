/**
 * Builds the simulated fleet: the loops (from the demo seed or defined inline in a scenario), the
 * scenario's activity and drifts per tag, a seed per loop derived from the run seed, and for load
 * runs synthetic clones (loop-count multiplier) and faster sampling (rate multiplier).
 */
import { slugify } from "@/lib/domain/slug";
import { LoopSim, type LoopSimConfig } from "./loop-sim";
import { deriveSeed } from "./prng";
import { activitySchema, type InlineLoop, type Scenario } from "./scenario";

export interface FleetOptions {
  scenario: Scenario;
  /** Loops known outside the scenario (e.g. the demo seed), in the scenario's inline format. */
  loops?: InlineLoop[];
  seed: number;
  /** Each loop also runs as N-1 synthetic clones (tags suffixed -x0001...); default 1. */
  loopMultiplier?: number;
  /** Telemetry and controller periods divided by this factor; default 1. */
  rateMultiplier?: number;
}

/** The clone tag of a loop for load runs (clone 0 is the loop itself). */
export function cloneTag(tag: string, i: number): string {
  return i === 0 ? tag : `${tag}-x${String(i).padStart(4, "0")}`;
}

/** Resolve every loop's full simulator configuration (no simulation state yet). */
export function fleetConfigs(options: FleetOptions): LoopSimConfig[] {
  const { scenario } = options;
  const multiplier = options.loopMultiplier ?? 1;
  const rate = options.rateMultiplier ?? 1;
  if (!Number.isInteger(multiplier) || multiplier < 1) throw new RangeError(`loop multiplier must be an integer >= 1, got ${multiplier}`);
  if (!(rate > 0) || !Number.isFinite(rate)) throw new RangeError(`rate multiplier must be a finite number > 0, got ${rate}`);
  const base = [...(options.loops ?? []), ...scenario.inlineLoops];
  const byTag = new Map(scenario.loops.map((l) => [l.tag, l]));
  const out: LoopSimConfig[] = [];
  for (let i = 0; i < multiplier; i++) {
    for (const loop of base) {
      const entry = byTag.get(loop.tag);
      const activity = activitySchema.parse({ ...scenario.activity, ...(entry?.activity ?? {}) });
      const tag = cloneTag(loop.tag, i);
      out.push({
        tenantSlug: loop.tenantSlug,
        siteSlug: loop.siteSlug,
        tag,
        slug: slugify(tag),
        telemetryPeriodS: loop.telemetryPeriodS / rate,
        controllerPeriodS: loop.controllerPeriodS / rate,
        plant: loop.plant,
        controller: loop.controller,
        pvRange: loop.pvRange,
        mvRange: loop.mvRange,
        mvLimitsPct: loop.mvLimitsPct,
        spPct: loop.spPct,
        mvPct: loop.mvPct,
        activity,
        drift: entry?.drift ?? [],
        seed: deriveSeed(options.seed, `${loop.tenantSlug}/${loop.siteSlug}/${tag}`),
      });
    }
  }
  return out;
}

/** Build the simulators of a fleet. */
export function buildFleet(options: FleetOptions): LoopSim[] {
  return fleetConfigs(options).map((c) => new LoopSim(c));
}
