/**
 * The worst-loops ranking is meaningful on the demo: an hour of the demo scenario's simulated
 * plants (simulators/scenarios/demo.json: the simulator's own fault drifts) runs through the real
 * trackers and the real history aggregator into samples_1m and pole_snapshots; the daily summary
 * is built by its SQL (lib/reports/summaries.ts) and the report ranks from it. The loops the
 * simulator drives into a fault the present figures can see must rank above every loop without a
 * fault. Which faults are visible is taken from the simulator's truth, not from our estimates:
 * a gain creep or dead-time growth whose true closed-loop decay ratio (the simulator's own poles;
 * the complex pole of largest modulus, as the tracker accuracy tests take it) reached 0.5 by the end of the hour, on a loop the tracker has judged
 * (slow loops may still be learning after one hour); a manual spell or saturation episode of
 * the scenario inside the hour. Slower drifts still healthy at the hour, sticking valves and frozen
 * transmitters (read by the routine-data assessment, which this harness does not run: its daily
 * summaries carry no finding) are printed, not asserted.
 * Also: screen document, CSV and PDF of the report carry the same cells; the PDF holds the top 50.
 */
import { execFileSync } from "node:child_process";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { decayRatio } from "@/lib/control/zplane";
import { reportCsv } from "@/lib/reports/csv";
import { reportPdf } from "@/lib/reports/pdf";
import { SCORE_FORMULA_LINES } from "@/lib/reports/score";
import { summarizeDay } from "@/lib/data/reports";
import { buildWorstLoops, type WorstLoopsReport } from "@/lib/reports/worst-loops";
import { worstLoopsDocument } from "@/lib/reports/worst-loops-document";
import { DEMO_LOOPS } from "@/lib/seed/demo";
import { Bus } from "@/server/context";
import { HistoryAggregator, type MinuteBucketRow, type PoleSnapshotRow } from "@/server/history/aggregate";
import { TrackerRegistry } from "@/server/tracking/registry";
import { buildFleet } from "@/simulators/fleet";
import { trueClosedLoopPoles } from "@/simulators/loop-sim";
import { loadScenario } from "@/simulators/scenario";
import { demoSimLoops } from "@/simulators/seed-loops";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { demoTrackerConfig, scenarioDir } from "../tracking/demo-harness";
import { FakeClock } from "../tracking/helpers";
import { PYTHON } from "../helpers/python";

const T0 = Date.UTC(2026, 10, 23, 8, 0, 0); // Monday 2026-11-23 08:00 UTC
const RUN_S = 3600;
const EPISODES = new Set(["manual-switch", "saturation"]);
const TUNING = new Set(["gain-creep", "dead-time-growth"]);

let db: TestDatabase;
let report: WorstLoopsReport;
const driftOf = new Map<string, string | null>();
const trueDecay = new Map<string, number>();
let tenantId = 0;

async function insertDemoLoops(): Promise<Map<string, number>> {
  const q = (sql: string, r: unknown[]) => db.sequelize.query(sql, { replacements: r });
  const [t] = (await q("INSERT INTO tenants (slug, name, created_at, updated_at) VALUES ('fenwick-mills', 'Fenwick Mills', UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))", [])) as unknown as [number];
  tenantId = Number(t);
  const [s] = (await q("INSERT INTO sites (tenant_id, slug, name, time_zone, created_at, updated_at) VALUES (?, 'east', 'East Works', 'UTC', UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))", [tenantId])) as unknown as [number];
  const ids = new Map<string, number>();
  for (const l of DEMO_LOOPS) {
    const [id] = (await q(
      `INSERT INTO loops (tenant_id, site_id, tag, slug, kind, units, pv_lo, pv_hi, mv_limit_lo, mv_limit_hi, telemetry_period_s, controller_period_s,
        gain_value, ti_value, estimation_period_s, created_at, updated_at)
       VALUES (?,?,?,?,?,?,?,?,0,100,?,?,1,10,?,UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))`,
      [tenantId, Number(s), l.tag, l.slug, l.kind, l.units, l.pvLo, l.pvHi, l.telemetryPeriodS, l.controllerPeriodS, l.estimationPeriodS],
    )) as unknown as [number];
    ids.set(l.tag, Number(id));
  }
  return ids;
}

async function runDemoHour(ids: Map<string, number>): Promise<void> {
  const scenario = await loadScenario(path.join(scenarioDir, "demo.json"));
  for (const l of scenario.loops) driftOf.set(l.tag, l.drift?.[0]?.kind ?? null);
  const fleet = buildFleet({ scenario, loops: demoSimLoops(), seed: scenario.seed ?? 1 });
  const clock = new FakeClock(T0);
  const bus = new Bus();
  const minutes: MinuteBucketRow[] = [];
  const snaps: PoleSnapshotRow[] = [];
  const agg = new HistoryAggregator({ second: () => {}, minute: (r) => minutes.push(r), snapshot: (r) => snaps.push(r) });
  bus.on("tracker:update", (s) => agg.addState(s));
  const registry = new TrackerRegistry({ bus, clock }, fleet.map((s) => demoTrackerConfig(s.config.tag, ids.get(s.config.tag)!)));
  for (let now = 1; now <= RUN_S; now++) {
    clock.t = T0 + now * 1000;
    for (const sim of fleet) {
      const id = ids.get(sim.config.tag)!;
      const out = sim.advanceTo(now).map((s) => ({ t: T0 + Math.round(s.simTimeS * 1000), sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode }));
      if (out.length) {
        agg.addSamples(id, out);
        registry.push(id, out, clock.t);
      }
    }
  }
  agg.closeAll();
  for (const sim of fleet) {
    // As tests/tracking/demo-accuracy.test.ts: the complex pole of largest modulus, its decay ratio.
    const osc = trueClosedLoopPoles(sim)
      .filter((z) => z.im > 0)
      .reduce<{ re: number; im: number } | null>((a, b) => (!a || Math.hypot(b.re, b.im) > Math.hypot(a.re, a.im) ? b : a), null);
    trueDecay.set(sim.config.tag, osc ? (decayRatio(osc) ?? 0) : 0);
  }
  const v = (x: number | null) => (x == null || !Number.isFinite(x) ? "NULL" : String(x));
  for (let i = 0; i < minutes.length; i += 500) {
    const chunk = minutes.slice(i, i + 500);
    await db.sequelize.query(
      `INSERT INTO samples_1m (loop_id, t, sp_min, sp_mean, sp_max, pv_min, pv_mean, pv_max, mv_min, mv_mean, mv_max, radius_min, radius_mean, radius_max, manual_fraction, n) VALUES ${chunk
        .map((r) => `(${r.loopId},${r.t},${[...r.sp, ...r.pv, ...r.mv, ...r.radius].map(v).join(",")},${v(r.manualFraction)},${r.n})`)
        .join(",")}`,
    );
  }
  for (let i = 0; i < snaps.length; i += 500) {
    const chunk = snaps.slice(i, i + 500);
    await db.sequelize.query(
      `INSERT INTO pole_snapshots (loop_id, t, radius, decay_ratio, poles, tracker_state) VALUES ${chunk.map((r) => `(${r.loopId},${r.t},${v(r.radius)},${v(r.decayRatio)},NULL,'${r.trackerState}')`).join(",")}`,
    );
  }
}

beforeAll(async () => {
  db = await createTestDatabase("worstloops", { asDefault: true });
  const ids = await insertDemoLoops();
  await runDemoHour(ids);
  expect(await summarizeDay("2026-11-23")).toBe(DEMO_LOOPS.length);
  report = await buildWorstLoops({ tenantId, tenantName: "Fenwick Mills" }, { from: Date.UTC(2026, 10, 23), to: Date.UTC(2026, 10, 30) });
}, 600_000);

afterAll(async () => {
  await db?.drop();
});

describe("worst-loops ranking on the demo scenario", () => {
  it("the loops the simulator makes faulty fill the top: 8 of the top 10, and each fault the figures can see ranks above the healthy median", () => {
    const table = report.rows.map(
      (r) => `${String(r.rank).padStart(2)} ${r.tag.padEnd(9)} ${r.score.toFixed(1).padStart(6)}  ${(driftOf.get(r.tag) ?? "-").padEnd(16)} true DR ${trueDecay.get(r.tag)?.toFixed(2)}  ${r.evidence.slice(0, 2).join("; ")}`,
    );
    console.info(`worst-loops ranking after one simulated hour:\n${table.join("\n")}`);
    expect(report.rows).toHaveLength(DEMO_LOOPS.length);
    const rankOf = new Map(report.rows.map((r) => [r.tag, r.rank]));
    // A loop the tracker has not judged yet (no estimate while tracking) has no decay ratio to rank on.
    const judged = new Set(report.rows.filter((r) => r.figures.decayRatioMean !== null).map((r) => r.tag));
    const faulty = new Set([...driftOf].filter(([, d]) => d).map(([t]) => t));
    const visible = [...driftOf]
      .filter(([t, d]) => d && (EPISODES.has(d) || (TUNING.has(d) && (trueDecay.get(t) ?? 0) >= 0.5 && judged.has(t))))
      .map(([t]) => t);
    const healthy = DEMO_LOOPS.map((l) => l.tag).filter((t) => !faulty.has(t));
    expect(visible.length).toBeGreaterThanOrEqual(6);
    expect(healthy.length).toBeGreaterThanOrEqual(8);
    const top10 = report.rows.slice(0, 10).filter((r) => faulty.has(r.tag)).length;
    expect(top10).toBeGreaterThanOrEqual(8);
    const healthyRanks = healthy.map((t) => rankOf.get(t)!).sort((a, b) => a - b);
    const median = healthyRanks[Math.floor(healthyRanks.length / 2)]!;
    for (const t of visible) expect({ tag: t, aboveHealthyMedian: rankOf.get(t)! < median }).toEqual({ tag: t, aboveHealthyMedian: true });
  });

  it("without the routine-data assessment in the harness no loop has a diagnosis: all 'not judged yet', and the missing terms are named", () => {
    for (const r of report.rows) {
      expect(r.figures.diagnosisLabel).toBe("undetermined");
      expect(r.missing).toEqual(expect.arrayContaining(["oscillation", "stiction", "harris"]));
    }
  });

  it("the formula is on the report, and CSV (all loops) and PDF (top 50) carry the screen's cells", async () => {
    const screen = worstLoopsDocument(report);
    const csv = reportCsv(screen);
    for (const line of SCORE_FORMULA_LINES) expect(csv).toContain(line);
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-worst-"));
    fs.writeFileSync(path.join(dir, "w.csv"), csv);
    const reader = "import csv, json, sys\nprint(json.dumps(list(csv.reader(open(sys.argv[1], encoding='utf-8-sig', newline='')))))";
    const records = JSON.parse(execFileSync(PYTHON, ["-c", reader, path.join(dir, "w.csv")], { encoding: "utf8" })) as string[][];
    for (const row of screen.sections[0]!.rows) expect(records).toContainEqual(row);
    const pdfDoc = worstLoopsDocument(report, { limit: 50 });
    fs.writeFileSync(path.join(dir, "w.pdf"), await reportPdf(pdfDoc));
    const dense = execFileSync("pdftotext", [path.join(dir, "w.pdf"), "-"], { encoding: "utf8" }).replace(/\s+/g, "");
    // 15 columns: printed on A4 in landscape (poppler's pdfinfo reads the page size in points)
    expect(execFileSync("pdfinfo", [path.join(dir, "w.pdf")], { encoding: "utf8" })).toMatch(/Page size:\s+841\.89 x 595\.28 pts/);
    expect(dense).toContain(SCORE_FORMULA_LINES[0]!.replace(/\s+/g, ""));
    for (const row of pdfDoc.sections[0]!.rows) {
      for (const cell of row.slice(0, 13)) expect(dense).toContain(cell.replace(/\s+/g, ""));
    }
    fs.rmSync(dir, { recursive: true, force: true });
  });
});

describe("work-list items beside the ranking", () => {
  it("each row names the loop's items still open or in work, with their owner; closed items are not shown", async () => {
    const q = (sql: string, r: unknown[]) => db.sequelize.query(sql, { replacements: r });
    const [uid] = (await q("INSERT INTO users (email, name, created_at, updated_at) VALUES ('eng@fenwick.example', 'Ada Quarry', UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))", [])) as unknown as [number];
    const [a, b] = report.rows;
    const [site] = (await db.sequelize.query("SELECT site_id FROM loops WHERE id = ?", { replacements: [a!.loopId], type: "SELECT" })) as { site_id: number }[];
    const item = (loopId: number, label: string, status: string, owner: number | null) =>
      q(
        `INSERT INTO work_items (tenant_id, site_id, loop_id, label, status, owner_id, confidence, opened_at, last_seen_at, closed_at, figures_at_open, figures_latest, evidence, created_at, updated_at)
         VALUES (?,?,?,?,?,?,0.8,UTC_TIMESTAMP(3),UTC_TIMESTAMP(3),?,'{}','{}','[]',UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))`,
        [tenantId, site!.site_id, loopId, label, status, owner, status === "closed" ? new Date() : null],
      );
    await item(a!.loopId, "valve-stiction", "in-work", Number(uid));
    await item(a!.loopId, "sluggish-tuning", "open", null);
    await item(b!.loopId, "aggressive-tuning", "closed", Number(uid));
    const r = await buildWorstLoops({ tenantId, tenantName: "Fenwick Mills" }, { from: Date.UTC(2026, 10, 23), to: Date.UTC(2026, 10, 30) });
    const rowA = r.rows.find((x) => x.loopId === a!.loopId)!;
    const rowB = r.rows.find((x) => x.loopId === b!.loopId)!;
    expect(rowA.workItems).toEqual([
      { label: "valve-stiction", status: "in-work", owner: "Ada Quarry" },
      { label: "sluggish-tuning", status: "open", owner: null },
    ]);
    expect(rowB.workItems).toEqual([]);
    const doc = worstLoopsDocument(r);
    const col = doc.sections[0]!.columns.findIndex((c) => c.label === "Work item");
    expect(col).toBeGreaterThan(0);
    const cells = new Map(doc.sections[0]!.rows.map((row) => [row[1], row[col]]));
    expect(cells.get(rowA.tag)).toBe("sticking valve, in work (Ada Quarry); sluggish tuning, open");
    expect(cells.get(rowB.tag)).toBe("–");
  });
});
