/**
 * Reports bench (`npm run bench:reports`): 2,000 loops with 14 days of daily summaries (this week
 * and the previous one, for the trend) in a throw-away MariaDB. Measures, each the median of 5 runs:
 *   - the weekly worst-loops report as the screen gets it: query + score + document (target < 2 s);
 *   - its PDF with the top 50 and their evidence (target < 5 s);
 *   - the CSV of the full ranking;
 *   - building one day's summaries for 2,000 loops from 1-minute history (1,440 rows per loop).
 * Figures are printed, never asserted. The summaries are invented bench data (seeded PRNG).
 */
import { performance } from "node:perf_hooks";
import type { Sequelize } from "sequelize";
import { startBenchDatabase } from "./bench-database";

const LOOPS = Number(process.env.BENCH_LOOPS ?? 2000);
const DAY_MS = 86_400_000;
const TO = Date.UTC(2026, 10, 30);
const FROM = TO - 7 * DAY_MS;


function prng(seed: number) {
  let s = seed >>> 0;
  return () => ((s = (s * 1664525 + 1013904223) >>> 0) / 2 ** 32);
}

async function seed(db: Sequelize): Promise<number> {
  const q = (sql: string, r: unknown[] = []) => db.query(sql, { replacements: r });
  await q("INSERT INTO tenants (id, slug, name) VALUES (1, 'bench-works', 'Bench Works')");
  for (let s = 1; s <= 4; s++) await q("INSERT INTO sites (id, tenant_id, slug, name, time_zone) VALUES (?, 1, ?, ?, 'UTC')", [s, `site-${s}`, `Site ${s}`]);
  const kinds = ["flow", "level", "temperature", "pressure", "composition"];
  const rows: string[] = [];
  for (let i = 1; i <= LOOPS; i++) {
    rows.push(`(${i},1,${1 + (i % 4)},'XIC-${i}','xic-${i}','${kinds[i % 5]}','u',0,100,1,1,1,10,1,${1 + (i % 5)})`);
  }
  for (let i = 0; i < rows.length; i += 1000) {
    await q(
      `INSERT INTO loops (id, tenant_id, site_id, tag, slug, kind, units, pv_lo, pv_hi, telemetry_period_s, controller_period_s, gain_value, ti_value, estimation_period_s, criticality) VALUES ${rows.slice(i, i + 1000).join(",")}`,
    );
  }
  const rnd = prng(7);
  const days: string[] = [];
  for (let d = 0; d < 14; d++) {
    const day = new Date(FROM - 7 * DAY_MS + d * DAY_MS).toISOString().slice(0, 10);
    for (let i = 1; i <= LOOPS; i++) {
      const sf = 1 - rnd() ** 6;
      days.push(`(${i},'${day}',1,${1 + (i % 4)},1440,${0.5 + 0.4 * rnd()},${0.6 + 0.5 * rnd()},${rnd()},${rnd() ** 2},${rnd() ** 8},${rnd() ** 8},${1 - sf},${rnd() ** 6},${sf})`);
    }
  }
  for (let i = 0; i < days.length; i += 2000) {
    await q(
      `INSERT INTO loop_daily_summaries (loop_id, day, tenant_id, site_id, minutes, radius_mean, radius_max, decay_ratio_max, decay_ratio_mean, unstable_share, alarm_share, manual_share, saturation_share, service_factor) VALUES ${days.slice(i, i + 2000).join(",")}`,
    );
  }
  return days.length;
}

async function median(fn: () => Promise<unknown>, n = 5): Promise<number> {
  const t: number[] = [];
  for (let i = 0; i < n; i++) {
    const t0 = performance.now();
    await fn();
    t.push(performance.now() - t0);
  }
  return t.sort((a, b) => a - b)[Math.floor(n / 2)]!;
}

async function main(): Promise<void> {
  const db = await startBenchDatabase({ name: "rg_rbench" });
  try {
    const { setSharedDb } = await import("@/lib/data/db/sequelize");
    const { initModels } = await import("@/models");
    setSharedDb({ sequelize: db.sequelize, models: initModels(db.sequelize) });
    const { buildWorstLoops } = await import("@/lib/reports/worst-loops");
    const { worstLoopsDocument } = await import("@/lib/reports/worst-loops-document");
    const { reportPdf } = await import("@/lib/reports/pdf");
    const { reportCsv } = await import("@/lib/reports/csv");
    const { summarizeDay } = await import("@/lib/data/reports");
    const rows = await seed(db.sequelize);
    const ctx = { tenantId: 1, tenantName: "Bench Works" };
    const screen = await median(async () => worstLoopsDocument(await buildWorstLoops(ctx, { from: FROM, to: TO }, TO, db.sequelize)));
    const report = await buildWorstLoops(ctx, { from: FROM, to: TO }, TO, db.sequelize);
    let pdfBytes = 0;
    const pdf = await median(async () => {
      const r = await buildWorstLoops(ctx, { from: FROM, to: TO }, TO, db.sequelize);
      pdfBytes = (await reportPdf(worstLoopsDocument(r, { limit: 50 }))).length;
    });
    let csvBytes = 0;
    const csv = await median(async () => {
      csvBytes = Buffer.byteLength(reportCsv(worstLoopsDocument(report)));
    });
    // One day of 1-minute history for every loop, then its summary (set-based SQL).
    const day = new Date(TO).toISOString().slice(0, 10);
    for (let m = 0; m < 1440; m += 60) {
      const values: string[] = [];
      for (let i = 1; i <= LOOPS; i++) for (let k = 0; k < 60; k++) values.push(`(${i},${TO + (m + k) * 60_000},50,50,50,50,50,50,40,45,50,0.8,0.85,0.9,0,600)`);
      await db.sequelize.query(`INSERT INTO samples_1m (loop_id, t, sp_min, sp_mean, sp_max, pv_min, pv_mean, pv_max, mv_min, mv_mean, mv_max, radius_min, radius_mean, radius_max, manual_fraction, n) VALUES ${values.join(",")}`);
    }
    const summarize = await median(() => summarizeDay(day, db.sequelize), 3);
    console.log(`reports bench: ${LOOPS} loops, ${rows} daily summaries (14 days)`);
    console.log(`  worst loops on screen (query + score + document), weekly : ${screen.toFixed(0)} ms   (target < 2000 ms, ratio ${(screen / 2000).toFixed(3)})`);
    console.log(`  worst loops PDF, top 50 with evidence                   : ${pdf.toFixed(0)} ms   (target < 5000 ms, ratio ${(pdf / 5000).toFixed(3)}), ${(pdfBytes / 1024).toFixed(0)} KiB`);
    console.log(`  worst loops CSV, full ranking (document -> CSV)         : ${csv.toFixed(0)} ms, ${(csvBytes / 1024).toFixed(0)} KiB`);
    console.log(`  daily summaries of one day from samples_1m (${LOOPS} x 1440 rows): ${summarize.toFixed(0)} ms`);
  } finally {
    await db.stop();
  }
}

await main();
process.exit(0);
