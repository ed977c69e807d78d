/**
 * In-process demo run for the tracker accuracy tests: the demo scenario's simulators
 * (simulators/scenarios/demo.json with the demo seed's loops) feed a `TrackerRegistry` directly
 * (no broker), on a fake clock that follows simulated time, so an hour of plant time runs in seconds.
 */
import path from "node:path";
import type { LoopStateDto, SampleDto } from "@/lib/domain/types";
import { DEMO_LOOPS, DEMO_PLANTS } from "@/lib/seed/demo";
import { Bus } from "@/server/context";
import { TrackerRegistry } from "@/server/tracking/registry";
import type { LoopConfig } from "@/server/tracking/types";
import { buildFleet } from "@/simulators/fleet";
import type { LoopSim } from "@/simulators/loop-sim";
import { loadScenario } from "@/simulators/scenario";
import { demoSimLoops } from "@/simulators/seed-loops";
import { FakeClock } from "./helpers";

export const scenarioDir = path.join(import.meta.dirname, "../../simulators/scenarios");

/**
 * The tracker configuration the server builds from a demo loop's stored row; `over` places the
 * loop in another tenant/site or under another tag (a test fixture's copy of the loop).
 */
export function demoTrackerConfig(tag: string, id: number, over: Partial<Pick<LoopConfig, "tenantId" | "siteId" | "tag">> = {}): LoopConfig {
  const l = DEMO_LOOPS.find((d) => d.tag === tag);
  const p = DEMO_PLANTS[tag];
  if (!l || !p) throw new Error(`no demo loop ${tag}`);
  return {
    id,
    tenantId: 1,
    siteId: 1,
    tag,
    pvLo: l.pvLo,
    pvHi: l.pvHi,
    mvLo: 0,
    mvHi: 100,
    mvLimitLo: 0,
    mvLimitHi: 100,
    telemetryPeriodS: l.telemetryPeriodS,
    controllerPeriodS: l.controllerPeriodS,
    estimationPeriodS: l.estimationPeriodS,
    controller: { ...p.controller },
    na: l.na,
    nb: l.nb,
    nk: l.nk,
    ...over,
  };
}

/** Every `tracker:update` state published on `bus`, per loop id, in order. */
export function collectStates(bus: Bus): Map<number, LoopStateDto[]> {
  const states = new Map<number, LoopStateDto[]>();
  bus.on("tracker:update", (s) => {
    const list = states.get(s.loopId) ?? [];
    list.push(s);
    states.set(s.loopId, list);
  });
  return states;
}

export interface DemoRun {
  sims: Map<string, LoopSim>;
  ids: Map<string, number>;
  registry: TrackerRegistry;
  /** The bus the registry publishes `tracker:update` on. */
  bus: Bus;
  clock: FakeClock;
  /** Every published state per loop id. */
  states: Map<number, LoopStateDto[]>;
  /** Advance every loop to simulated time `t` s, calling `each` after every 1 s step of simulated time. */
  advanceTo(t: number, each?: (tS: number) => void): void;
}

export async function startDemoRun(
  options: {
    /** A scenario of simulators/scenarios by name (default "demo"), or a path to a scenario file (a test's fixture). */
    scenario?: string;
    tags?: string[];
    seed?: number;
    onSamples?: (loopId: number, samples: SampleDto[]) => void;
  } = {},
): Promise<DemoRun> {
  const name = options.scenario ?? "demo";
  const scenario = await loadScenario(name.endsWith(".json") ? name : path.join(scenarioDir, `${name}.json`));
  const loops = demoSimLoops().filter((l) => !options.tags || options.tags.includes(l.tag));
  const fleet = buildFleet({ scenario, loops, seed: options.seed ?? scenario.seed ?? 1 });
  const sims = new Map(fleet.map((s) => [s.config.tag, s]));
  const ids = new Map(fleet.map((s, i) => [s.config.tag, i + 1]));
  const clock = new FakeClock(Date.UTC(2026, 0, 5, 8, 0, 0));
  const t0 = clock.t;
  const bus = new Bus();
  const states = collectStates(bus);
  const registry = new TrackerRegistry({ bus, clock }, fleet.map((s) => demoTrackerConfig(s.config.tag, ids.get(s.config.tag)!)));
  let now = 0;
  return {
    sims,
    ids,
    registry,
    bus,
    clock,
    states,
    advanceTo(t: number, each?: (tS: number) => void) {
      while (now < t) {
        now += 1;
        clock.t = t0 + now * 1000;
        for (const sim of fleet) {
          const id = ids.get(sim.config.tag)!;
          const out = sim.advanceTo(now);
          if (out.length > 0) {
            const samples = out.map((s) => ({ t: t0 + Math.round(s.simTimeS * 1000), sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode }));
            registry.push(id, samples, clock.t);
            // then the live routine assessment, in the pipeline's order
            options.onSamples?.(id, samples);
          }
        }
        each?.(now);
      }
    },
  };
}
