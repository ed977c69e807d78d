/**
 * Measures the demo's routine findings: the real demo simulators (simulators/scenarios/demo.json
 * with the seeded loops) run in-process, sped up (simulated time, no wall-clock waits), and every
 * telemetry sample goes through the live assessor exactly as the pipeline hands it over. Prints,
 * per loop, when it first showed a verdict or the time still needed, its verdict at the checkpoints,
 * and whether the verdict matches the scenario (a sticking valve from the start reads
 * valve-stiction; a loop whose drift has not started reads healthy; a drift under way reads as its
 * kind — gain creep may also still read healthy). Run: node --import tsx scripts/measure-demo-findings.ts [minutes]
 */
import path from "node:path";
import { parseLoopConfig } from "@/lib/assessment";
import { DEMO_LOOPS } from "@/lib/seed/demo";
import { LiveAssessor, type LiveResult } from "@/server/assessment/assessor";
import { buildFleet } from "@/simulators/fleet";
import { loadScenario } from "@/simulators/scenario";
import { demoSimLoops } from "@/simulators/seed-loops";
import { opensWorkItem } from "@/lib/domain/findings";

const minutes = Number(process.argv[2] ?? 10);
const T0 = Date.UTC(2026, 11, 2, 12);

const ACCEPT: Record<string, string[]> = {
  "sticky-valve": ["valve-stiction"],
  "gain-creep": ["aggressive-tuning", "healthy"],
  "dead-time-growth": ["aggressive-tuning", "healthy"],
  saturation: ["saturated"],
  "manual-switch": ["manual"],
  "frozen-sensor": ["sensor-fault"],
  "outside-oscillation": ["external-disturbance"],
};

async function main() {
  const scenario = await loadScenario(path.join(import.meta.dirname, "..", "simulators", "scenarios", "demo.json"));
  const inline = demoSimLoops();
  const sims = buildFleet({ scenario, loops: inline, seed: scenario.seed ?? 1 });
  const drifts = new Map(scenario.loops.map((l) => [l.tag, (l.drift ?? []) as { kind: string; startS: number; durationS?: number }[]]));
  const results = new Map<number, LiveResult[]>();
  const live = new LiveAssessor({ now: () => clock, onResult: (r) => results.get(r.loopId)!.push(r) });
  let clock = T0;
  const tags: string[] = [];
  sims.forEach((sim, i) => {
    const il = inline.find((l) => l.tag === sim.config.tag)!;
    const dl = DEMO_LOOPS.find((l) => l.tag === sim.config.tag)!;
    tags[i] = dl.tag;
    results.set(i, []);
    const c = il.controller;
    live.upsertLoop({
      loopId: i,
      tenantId: 0,
      siteId: 0,
      config: parseLoopConfig({
        tag: dl.tag,
        kind: ["flow", "level", "pressure", "temperature"].includes(dl.kind) ? dl.kind : "other",
        pvLo: il.pvRange[0],
        pvHi: il.pvRange[1],
        samplePeriodS: il.telemetryPeriodS,
        controller: { kp: c.kp, ti: c.ti ?? null, td: c.td ?? 0, action: c.action ?? "reverse", mvLo: 0, mvHi: 100, form: c.form ?? "ideal" },
      }),
    });
  });
  const expectedAt = (tag: string, tS: number): string[] => {
    const active = (drifts.get(tag) ?? []).filter((d) => d.startS <= tS && (d.durationS == null || d.kind === "sticky-valve" || d.kind === "gain-creep" || d.kind === "dead-time-growth" || tS <= d.startS + d.durationS));
    return active.length ? active.flatMap((d) => ACCEPT[d.kind] ?? []) : ["healthy"];
  };
  const cpu0 = process.cpuUsage();
  let assessed = 0;
  let samples = 0;
  for (let s = 1; s <= minutes * 60; s++) {
    clock = T0 + s * 1000;
    sims.forEach((sim, i) => {
      const out = sim.advanceTo(s);
      samples += out.length;
      live.push(i, out.map((x) => ({ t: T0 + Math.round(x.simTimeS * 1000), sp: x.sp, pv: x.pv, mv: x.mv, mode: x.mode })));
    });
    assessed += live.runDue(1e9);
  }
  const cpu = process.cpuUsage(cpu0);
  console.log(`simulated ${minutes} min of ${sims.length} demo loops; ${samples} samples; ${assessed} assessments; process CPU ${((cpu.user + cpu.system) / 1e3).toFixed(0)} ms (simulators included)`);
  const checkpoints = [3, 5, minutes].filter((m, k, a) => m <= minutes && a.indexOf(m) === k);
  const summary = checkpoints.map(() => ({ shown: 0, verdicts: 0, correct: 0 }));
  const firstWork = new Map<string, number>();
  console.log(`tag          first(s) ${checkpoints.map((m) => `at ${m} min`.padEnd(40)).join(" ")}`);
  sims.forEach((_sim, i) => {
    const rs = results.get(i)!;
    const tag = tags[i]!;
    const first = rs[0] ? (rs[0].at - T0) / 1000 : null;
    const cells = checkpoints.map((m, k) => {
      const r = [...rs].reverse().find((x) => x.at - T0 <= m * 60_000);
      if (!r) return "none yet";
      summary[k]!.shown++;
      const d = r.report.diagnosis;
      if (d.label === "undetermined") return `not judged yet · needs ${Math.round((d.needsS ?? 0) / 60)} min`;
      summary[k]!.verdicts++;
      const ok = expectedAt(tag, m * 60).includes(d.label);
      if (ok) summary[k]!.correct++;
      return `${d.label} ${d.confidence.toFixed(2)} ${ok ? "ok" : `MISS (want ${expectedAt(tag, m * 60).join("/")})`}`;
    });
    for (const r of rs) {
      const d = r.report.diagnosis;
      if (opensWorkItem(d) && expectedAt(tag, (r.at - T0) / 1000).includes(d.label) && d.label !== "healthy") {
        const tenant = DEMO_LOOPS.find((l) => l.tag === tag)!.tenant;
        const t = (r.at - T0) / 1000;
        if (!firstWork.has(tenant) || firstWork.get(tenant)! > t) firstWork.set(tenant, t);
        break;
      }
    }
    console.log(`${tag.padEnd(12)} ${String(first ?? "-").padEnd(8)} ${cells.map((c) => c.padEnd(40)).join(" ")}`);
  });
  checkpoints.forEach((m, k) => {
    const s = summary[k]!;
    console.log(`at ${m} min: ${s.shown}/${sims.length} loops show a verdict or the time needed; ${s.verdicts} verdicts, ${s.correct} match the scenario (${s.verdicts ? ((100 * s.correct) / s.verdicts).toFixed(0) : "-"} %)`);
  });
  const tenants = [...new Set(DEMO_LOOPS.map((l) => l.tenant))];
  for (const t of tenants) console.log(`tenant ${t}: first correct work-list finding at ${firstWork.has(t) ? `${firstWork.get(t)} s` : "none within the run"}`);
}

main().catch((e: unknown) => {
  console.error(e);
  process.exit(1);
});
