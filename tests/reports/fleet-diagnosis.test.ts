/**
 * The daily summaries record the live assessment's diagnosis, and fleet health filters by site,
 * area and kind alike on screen, in the CSV and in the PDF.
 *
 * The scheduler reads each summarised loop's current finding from the running pipeline's
 * assessment service (a stand-in with the same shape here: findings are fixture values, not
 * estimates) and writes it to that day's row when the finding is of that day; a finding of an
 * earlier day leaves the row `undetermined`. Fleet health then counts real labels. The filtered
 * report is fetched through its route as JSON, CSV and PDF and the page is rendered: the cells
 * agree (CSV read back by Python's csv module, PDF text by poppler-utils' pdftotext).
 */
import { execFileSync } from "node:child_process";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { QueryTypes } from "sequelize";
import { renderToStaticMarkup } from "react-dom/server";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import type { LoopFinding } from "@/lib/domain/findings";
import type { TenantContext } from "@/lib/domain/types";
import { buildFleetHealth, type FleetHealth } from "@/lib/reports/fleet-health";
import { fleetHealthDocument } from "@/lib/reports/fleet-health-document";
import type { LiveFindingSource } from "@/lib/reports/summaries";
import type { ServerContext } from "@/server/context";
import { startReports } from "@/server/reports";
import { createFixture, FakeClock, testContext, type Fixture } from "../alarms/helpers";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { PYTHON } from "../helpers/python";

let current: TenantContext | null = null;
vi.mock("@/lib/auth/guard", async () => (await import("@/tests/helpers/guard-stand-in")).guardStandIn({ currentUser: () => current }));

const route = await import("@/app/api/reports/fleet-health/route");
const page = (await import("@/app/(console)/reports/fleet-health/page")).default;

const Z = (s: string) => Date.parse(s);
const DAY = "2026-11-24";
let db: TestDatabase;
let fx: Fixture;
let ctx: ServerContext;
const ids = { flow: 0, level: 0, temperature: 0 };
let utilitiesId = 0;

const finding = (loopId: number, at: string, label: LoopFinding["label"], confidence: number): LoopFinding => ({
  loopId,
  at: Z(at),
  label,
  confidence,
  needsS: null,
  reason: null,
  evidence: [],
  windowS: 3600,
  oscillationPeriodS: null,
  harrisIndex: null,
  stiction: "undetermined",
  sharedOscillation: null,
});

/** The shape of the running pipeline the scheduler reads findings from (server/pipeline.ts). */
function pipelineStandIn(sources: Map<number, LiveFindingSource>) {
  return {
    name: "pipeline",
    ingestDiagnostics: () => ({ devices: [] }),
    assessment: {
      finding: (id: number) => (sources.get(id)?.finding as LoopFinding | undefined) ?? null,
      assessor: { latestOf: (id: number) => (sources.has(id) ? { report: sources.get(id)!.report } : null) },
    },
    health: () => ({ status: "ok" }),
    stop: async () => {},
  };
}

beforeAll(async () => {
  db = await createTestDatabase("reportsfleet", { asDefault: true });
  fx = await createFixture(db.models);
  const q = (sql: string, r: unknown[]) => db.sequelize.query(sql, { replacements: r });
  ids.flow = fx.loopId; // FIC-101, area Reactors, kind flow
  const [a] = (await q("INSERT INTO areas (tenant_id, site_id, slug, name, created_at, updated_at) VALUES (?,?, 'utilities', 'Utilities', UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))", [
    fx.tenantId,
    fx.siteId,
  ])) as unknown as [number];
  utilitiesId = Number(a);
  const addLoop = async (tag: string, kind: string, areaId: number) => {
    const [id] = (await q(
      `INSERT INTO loops (tenant_id, site_id, area_id, tag, slug, kind, units, pv_lo, pv_hi, telemetry_period_s, controller_period_s, gain_value, ti_value, estimation_period_s, created_at, updated_at)
       VALUES (?,?,?,?,?,?, 'u', 0, 100, 1, 1, 1, 10, 1, UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))`,
      [fx.tenantId, fx.siteId, areaId, tag, tag.toLowerCase(), kind],
    )) as unknown as [number];
    return Number(id);
  };
  ids.level = await addLoop("LIC-201", "level", utilitiesId);
  ids.temperature = await addLoop("TIC-301", "temperature", fx.areaId);
  // Ten minutes of 1-minute history for each loop on the day.
  const rows: string[] = [];
  for (const id of Object.values(ids)) for (let m = 0; m < 10; m++) rows.push(`(${id}, ${Z(`${DAY}T09:00:00Z`) + m * 60_000}, 50, 50, 50, 49, 50, 51, 40, 41, 42, 0.5, 0.6, 0.7, 0, 60)`);
  await q(`INSERT INTO samples_1m (loop_id, t, sp_min, sp_mean, sp_max, pv_min, pv_mean, pv_max, mv_min, mv_mean, mv_max, radius_min, radius_mean, radius_max, manual_fraction, n) VALUES ${rows.join(",")}`, []);

  const sources = new Map<number, LiveFindingSource>([
    [ids.flow, { finding: finding(ids.flow, `${DAY}T11:00:00Z`, "valve-stiction", 0.8), report: { oscillation: { detected: true, periodS: 90, regularity: 2, amplitude: 1 }, stiction: { verdict: "likely", evidence: [] }, harrisIndex: 3.3 } }],
    [ids.level, { finding: finding(ids.level, `${DAY}T10:00:00Z`, "healthy", 0.95), report: { oscillation: { detected: false, periodS: null, regularity: null, amplitude: null }, stiction: { verdict: "unlikely", evidence: [] }, harrisIndex: 1.2 } }],
    // Judged the day before: says nothing about this day.
    [ids.temperature, { finding: finding(ids.temperature, "2026-11-23T22:00:00Z", "aggressive-tuning", 0.9), report: null }],
  ]);
  ctx = testContext(new FakeClock(Z(`${DAY}T12:00:00Z`)));
  ctx.services.set("pipeline", pipelineStandIn(sources) as never);
  const s = await startReports(ctx, { intervalMs: null });
  await s.tick();
  await s.stop();
}, 120_000);

afterAll(async () => {
  await db?.drop();
});

describe("daily summaries take the live assessment's diagnosis", () => {
  it("writes the label, confidence and figures of a finding of the day, and leaves a finding of another day out", async () => {
    const rows = await db.sequelize.query<{ loop_id: number; diagnosis_label: string; diagnosis_confidence: number | null; oscillation_index: number | null; stiction_likelihood: number | null; harris_index: number | null }>(
      "SELECT loop_id, diagnosis_label, diagnosis_confidence, oscillation_index, stiction_likelihood, harris_index FROM loop_daily_summaries WHERE day = ? ORDER BY loop_id",
      { replacements: [DAY], type: QueryTypes.SELECT },
    );
    const by = new Map(rows.map((r) => [Number(r.loop_id), r]));
    expect(by.get(ids.flow)).toMatchObject({ diagnosis_label: "valve-stiction", diagnosis_confidence: 0.8, oscillation_index: 1, stiction_likelihood: 1, harris_index: 3.3 });
    expect(by.get(ids.level)).toMatchObject({ diagnosis_label: "healthy", diagnosis_confidence: 0.95, oscillation_index: 0, stiction_likelihood: 0 });
    expect(by.get(ids.temperature)).toMatchObject({ diagnosis_label: "undetermined", diagnosis_confidence: null });
  });

  it("a rebuild of the day (the history keeps coming) keeps the diagnosis", async () => {
    const { summarizeDay } = await import("@/lib/data/reports");
    await summarizeDay(DAY);
    const [r] = await db.sequelize.query<{ diagnosis_label: string }>("SELECT diagnosis_label FROM loop_daily_summaries WHERE day = ? AND loop_id = ?", {
      replacements: [DAY, ids.flow],
      type: QueryTypes.SELECT,
    });
    expect(r?.diagnosis_label).toBe("valve-stiction");
  });

  it("fleet health shows the real label shares", async () => {
    const r = await buildFleetHealth(fx.users.viewer, { from: Z("2026-11-23T00:00:00Z"), to: Z("2026-11-30T00:00:00Z"), granularity: "week" });
    expect(r.buckets).toHaveLength(1);
    expect(r.buckets[0]).toMatchObject({ label: "2026-W48", loops: 3 });
    expect(r.buckets[0]!.counts).toMatchObject({ "valve-stiction": 1, healthy: 1, undetermined: 1, "aggressive-tuning": 0 });
  });
});

describe("fleet health filters by site, area and kind", () => {
  const period = { from: Z("2026-11-23T00:00:00Z"), to: Z("2026-11-30T00:00:00Z"), granularity: "week" as const };
  const loopsOf = (r: FleetHealth) => r.buckets[0]?.loops ?? 0;

  it("counts only the loops the filters admit", async () => {
    const v = fx.users.viewer;
    expect(loopsOf(await buildFleetHealth(v, { ...period, siteId: fx.siteId }))).toBe(3);
    const reactors = await buildFleetHealth(v, { ...period, areaId: fx.areaId });
    expect(loopsOf(reactors)).toBe(2);
    expect(reactors.buckets[0]!.counts).toMatchObject({ "valve-stiction": 1, undetermined: 1, healthy: 0 });
    const level = await buildFleetHealth(v, { ...period, kind: "level" });
    expect(loopsOf(level)).toBe(1);
    expect(level.buckets[0]!.counts.healthy).toBe(1);
    expect(loopsOf(await buildFleetHealth(v, { ...period, areaId: utilitiesId, kind: "flow" }))).toBe(0);
    expect(fleetHealthDocument(reactors).title).toBe("Fleet health — Reactors");
  });

  it("a site outside the caller's scope is a 404, like a missing one", async () => {
    await expect(buildFleetHealth(fx.users.viewer, { ...period, siteId: fx.siteId, siteIds: [fx.siteId + 1000] })).rejects.toMatchObject({ status: 404 });
  });

  it("screen, CSV and PDF of a filtered report carry the same cells", async () => {
    current = fx.users.viewer;
    const qs = `from=2026-11-23&to=2026-11-29&areaId=${fx.areaId}&kind=flow`;
    const get = (format: string) => route.GET(new Request(`http://127.0.0.1/api/reports/fleet-health?${qs}&format=${format}`));
    const json = await get("json");
    expect(json.status).toBe(200);
    const { report } = (await json.json()) as { report: FleetHealth };
    expect(report.buckets[0]).toMatchObject({ loops: 1, counts: expect.objectContaining({ "valve-stiction": 1 }) });
    const doc = fleetHealthDocument(report);
    const trend = doc.sections[0]!.rows;
    expect(trend).toHaveLength(1);
    expect(trend[0]!.slice(0, 2)).toEqual(["2026-W48", "1"]);

    const html = renderToStaticMarkup(await page({ searchParams: Promise.resolve({ from: "2026-11-23", to: "2026-11-29", areaId: String(fx.areaId), kind: "flow" }) }));
    const text = html.replace(/<[^>]+>/g, " ").replace(/\s+/g, " ");
    expect(text).toContain(doc.title.replace("—", "—"));

    const dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-fleet-"));
    fs.writeFileSync(path.join(dir, "f.csv"), Buffer.from(await (await get("csv")).arrayBuffer()));
    const reader = "import csv, json, sys\nprint(json.dumps(list(csv.reader(open(sys.argv[1], encoding='utf-8-sig', newline='')))))";
    const records = JSON.parse(execFileSync(PYTHON, ["-c", reader, path.join(dir, "f.csv")], { encoding: "utf8" })) as string[][];
    fs.writeFileSync(path.join(dir, "f.pdf"), Buffer.from(await (await get("pdf")).arrayBuffer()));
    const dense = execFileSync("pdftotext", [path.join(dir, "f.pdf"), "-"], { encoding: "utf8" }).replace(/\s+/g, "");
    let checked = 0;
    for (const s of doc.sections) {
      for (const row of s.rows) {
        expect(records).toContainEqual(row);
        const cells = html.match(/<tr[^>]*>(.*?)<\/tr>/g)?.map((tr) => [...tr.matchAll(/<td[^>]*>(.*?)<\/td>/g)].map((m) => m[1]!.replace(/<[^>]+>/g, "").trim())) ?? [];
        expect(cells).toContainEqual(row);
        for (const cell of row) {
          expect(dense).toContain(cell.replace(/\s+/g, ""));
          checked++;
        }
      }
    }
    expect(checked).toBeGreaterThan(10);
    fs.rmSync(dir, { recursive: true, force: true });
  });
});
