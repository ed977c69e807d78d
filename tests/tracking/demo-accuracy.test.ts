/**
 * Accuracy of the tracker on the demo loops WITH their demo noise (simulators/scenarios/demo.json:
 * PV noise 0.1 % of span, random load steps and walk, set-point moves about every 150 s, spells in
 * manual; PIC-1103 and PIC-4103 with 0.05 % noise and moves about every 10 s), in-process and sped up: the simulator core feeds a `TrackerRegistry` on a fake clock
 * (tests/tracking/demo-harness.ts), no broker.
 *
 * The truth is the simulator's own: the eigenvalues of each loop's closed-loop state matrix at
 * its current drift state (`trueClosedLoopPoles`), at the controller period Tc. The tracker's
 * model-based poles are at its estimation period Te, so poles are compared in s-plane terms,
 * s = ln(z)/T: |s_est - s_true| <= 0.1 |s_true| (the 10 % criterion of the product brief). The
 * decay ratio (period-invariant) is compared with an absolute tolerance stated per check.
 * Dominant pole = the pole of largest modulus (common practice).
 *
 * Known limits (measured with this test's run, seed 1; see the report): integrating level loops
 * LIC-2102 and LIC-4102 stay 15-80 % off on the slow real pole next to the PI zero; TIC-3202
 * (PID, dead time 60 s, Te = 25 s against Tc = 5 s) 22-35 % off, as the controller can only be
 * re-discretised at Te (docs/architecture.md §4); TIC-2203 saturates on the demo's set-point
 * moves and tracks only after about 55 minutes. Those are not asserted at 10 %.
 */
import { beforeAll, describe, expect, it } from "vitest";
import type { Complex } from "@/lib/control/types";
import { decayRatio } from "@/lib/control/zplane";
import type { LoopStateDto } from "@/lib/domain/types";
import { trueClosedLoopPoles } from "@/simulators/loop-sim";
import { startDemoRun, type DemoRun } from "./demo-harness";

const mod = (z: Complex) => Math.hypot(z.re, z.im);

interface Check {
  t: number;
  state: LoopStateDto;
  /** s-plane error of the dominant model pole, relative to |s_true|; NaN without a model. */
  err: number;
  trueDecay: number;
  /** Seconds of simulated time the loop has been `tracking` so far. */
  trackingS: number;
}

let run: DemoRun;
const checks = new Map<string, Check[]>();
const trackingSince = new Map<string, number>();
/** Every published `tracking` state's spectral radius per tag. */
const radii = new Map<string, number[]>();

beforeAll(async () => {
  run = await startDemoRun();
  const trackedS = new Map<string, number>();
  run.advanceTo(3600, (t) => {
    for (const [tag, id] of run.ids) {
      const st = run.registry.get(id)!.current;
      if (st.trackerState === "tracking") {
        trackedS.set(tag, (trackedS.get(tag) ?? 0) + 1);
        if (!trackingSince.has(tag)) trackingSince.set(tag, t);
        if (st.spectralRadius !== null) radii.set(tag, [...(radii.get(tag) ?? []), st.spectralRadius]);
      }
      if (t % 300 !== 0) continue;
      const sim = run.sims.get(tag)!;
      const truth = trueClosedLoopPoles(sim);
      const dom = truth.reduce((a, b) => (mod(b) > mod(a) ? b : a));
      const osc = truth.filter((z) => z.im > 0).reduce<Complex | null>((a, b) => (!a || mod(b) > mod(a) ? b : a), null);
      const sT = { re: Math.log(mod(dom)) / sim.Tc, im: Math.abs(Math.atan2(dom.im, dom.re)) / sim.Tc };
      let err = NaN;
      if (st.modelPoles.length > 0) {
        const T = st.estimationPeriodS;
        const md = st.modelPoles.reduce((a, b) => (mod(b) > mod(a) ? b : a));
        err = Math.hypot(Math.log(mod(md)) / T - sT.re, Math.abs(Math.atan2(md.im, md.re)) / T - sT.im) / Math.hypot(sT.re, sT.im);
      }
      const list = checks.get(tag) ?? [];
      list.push({ t, state: st, err, trueDecay: (osc ? decayRatio(osc) : null) ?? 0, trackingS: trackedS.get(tag) ?? 0 });
      checks.set(tag, list);
    }
  });
}, 300_000);

/** The checks of a tag at or after `fromS` where the loop is tracking and has tracked at least `minTrackingS`. */
function tracked(tag: string, fromS: number, minTrackingS: number): Check[] {
  return (checks.get(tag) ?? []).filter((c) => c.t >= fromS && c.state.trackerState === "tracking" && c.trackingS >= minTrackingS);
}

function expectAccurate(tag: string, list: Check[], decayTol: number, minChecks: number): void {
  expect(list.length, `${tag}: checks in tracking`).toBeGreaterThanOrEqual(minChecks);
  for (const c of list) {
    expect(c.err, `${tag} at ${c.t} s: dominant pole s-plane error`).toBeLessThanOrEqual(0.1);
    expect(Math.abs((c.state.decayRatio ?? 0) - c.trueDecay), `${tag} at ${c.t} s: decay ratio ${c.state.decayRatio} vs ${c.trueDecay}`).toBeLessThanOrEqual(decayTol);
  }
}

describe("demo loops with demo noise: model-based poles against the simulator's true poles", () => {
  it("first order plus dead time (PIC-1202, PIC-2201, FIC-3102, PIC-4202): within 10 % in s and 0.03 in decay ratio after 300 s of tracking", () => {
    for (const tag of ["PIC-1202", "PIC-2201", "FIC-3102", "PIC-4202"]) expectAccurate(tag, tracked(tag, 0, 300), 0.03, 8);
  });

  it("underdamped second order, PIC-3103 (true decay ratio 0.50-0.68 as its dead time grows until 2100 s): within 10 %, and 0.2 in decay ratio while the dead time grows (the estimate lags by its memory), 0.06 after", () => {
    expectAccurate("PIC-3103", tracked("PIC-3103", 0, 600), 0.2, 9);
    expectAccurate("PIC-3103", tracked("PIC-3103", 2400, 600), 0.06, 4);
  });

  it("underdamped second order with a gain creeping to 80 % of critical, PIC-1103 (true decay ratio 0.77 at the end): within 10 % and 0.06 once the creep has been over for 25 minutes", () => {
    // while the gain creeps the estimate lags by a few set-point moves (the IV memory); see truth.test.ts
    expectAccurate("PIC-1103", tracked("PIC-1103", 2400, 600), 0.06, 4);
  });

  it("first order with a gain creeping into oscillation, PIC-4103 (to 95 % of critical, true decay ratio 0.87): within 10 % and 0.05 from 1800 s", () => {
    expectAccurate("PIC-4103", tracked("PIC-4103", 1800, 600), 0.05, 6);
  });

  it("integrating level with a lag, LIC-1102: within 10 % from 2400 s (ten set-point moves in)", () => {
    expectAccurate("LIC-1102", tracked("LIC-1102", 2400, 600), 0.03, 4);
  });

  it("long dead time with PID, TIC-3101 (dead time 30 s, Te = 12 s, gain creeping all run): within 10 %, and 0.08 in decay ratio after 600 s of tracking (measured: the estimate stays near 0.06 from 3000 s while the truth rises 0.10 -> 0.125: it lags the creep)", () => {
    expectAccurate("TIC-3101", tracked("TIC-3101", 0, 600), 0.08, 6);
  });

  it("no loop without a fault drift ever reports a spectral radius >= 1 while tracking", () => {
    const healthy = ["PIC-1202", "PIC-2201", "FIC-3102", "PIC-4202", "LIC-1102", "LIC-2102", "LIC-4102", "TIC-2203", "TIC-3202"];
    let withStates = 0;
    for (const tag of healthy) {
      const list = radii.get(tag) ?? [];
      // TIC-2203 saturates on the demo's set-point moves and may not track within the hour
      if (tag === "TIC-2203" && list.length === 0) continue;
      expect(list.length, `${tag}: tracking states`).toBeGreaterThan(0);
      withStates++;
      expect(Math.max(...list), tag).toBeLessThan(1);
      // and the truth agrees they are stable
      expect(Math.max(...trueClosedLoopPoles(run.sims.get(tag)!).map(mod)), tag).toBeLessThan(1);
    }
    expect(withStates).toBeGreaterThanOrEqual(8);
  });

  it("slow loops (estimation periods 6-12 s) leave `learning` within 15 minutes of simulated time", () => {
    const tags = ["LIC-1102", "LIC-2102", "LIC-4102", "TIC-4201", "TIC-3101"];
    console.info(`first tracking, s of simulated time: ${tags.map((t) => `${t} ${trackingSince.get(t) ?? "never"}`).join(", ")}`);
    for (const tag of tags) {
      const since = trackingSince.get(tag);
      expect(since, `${tag} never tracked`).toBeDefined();
      expect(since!, tag).toBeLessThanOrEqual(900);
    }
  });
});
