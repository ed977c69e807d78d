/**
 * Assessing a historian export in the console (issue: every loop gets a verdict from routine data,
 * offline from a historian export), on MariaDB and the loopback object store: an engineer uploads
 * a labelled DEV recording of simulators/benchmark as the historian would export it, on a loop whose
 * stored settings are that recording's; the console's assessment is the offline command's
 * (`npm run -s assess -- FILE --config LOOP.json --json`, run as a child process on the same file and
 * the same settings), it is kept in the loop's record and listed; viewers read, only engineers
 * upload; a bad file gets a 422 naming its line and stores nothing; another tenant's loop is 404.
 */
import { execFileSync } from "node:child_process";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { ListObjectsV2Command } from "@aws-sdk/client-s3";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import { getConfig, publicOrigin } from "@/lib/config";
import { loadAssessmentConfigs } from "@/lib/data/assessment-configs";
import { setServerContext } from "@/lib/data/server-context";
import type { Role } from "@/lib/domain/types";
import { Bus, systemClock, type ServerContext } from "@/server/context";
import { startObjectStore, type ObjectStoreService } from "@/server/objectstore";
import { benchmarkPlan, generateRecording } from "@/simulators/benchmark/generate";
import { recordingCsv } from "@/simulators/benchmark/files";
import { createFixture, type Fixture } from "../alarms/helpers";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { signInAs } from "@/tests/helpers/guard-stand-in";

vi.mock("@/lib/auth/guard", async () => (await import("@/tests/helpers/guard-stand-in")).guardStandIn());

const listRoute = await import("@/app/api/loops/[loopId]/exports/route");
const oneRoute = await import("@/app/api/loops/[loopId]/exports/[exportId]/route");
const dataRoute = await import("@/app/api/loops/[loopId]/exports/[exportId]/data/route");

let db: TestDatabase;
let fx: Fixture;
let store: ObjectStoreService;
let ctx: ServerContext;

const plan = benchmarkPlan();
const rec = generateRecording("dev", plan.find((p) => p.label === "valve-stiction")!.index);
const CSV = recordingCsv(rec.samples, rec.config, { startIso: "2026-11-30T06:00:00Z" });

const url = (p: string) => `http://127.0.0.1${p}`;
const as = (role: Role | "outsider") => signInAs(role === "outsider" ? fx.outsider : fx.users[role]);
const lp = (loopId: number) => ({ params: Promise.resolve({ loopId: String(loopId) }) });
const ep = (loopId: number, exportId: number | string) => ({ params: Promise.resolve({ loopId: String(loopId), exportId: String(exportId) }) });
function upload(loopId: number, content: string, filename = "fic101-week48.csv"): Request {
  const form = new FormData();
  form.set("file", new Blob([content], { type: "text/csv" }), filename);
  return new Request(url(`/api/loops/${loopId}/exports`), { method: "POST", headers: { origin: publicOrigin() }, body: form });
}
async function objectKeys(): Promise<string[]> {
  const r = await store.client.send(new ListObjectsV2Command({ Bucket: store.bucket }));
  return (r.Contents ?? []).map((c) => c.Key!).sort();
}
const rows = async () => Number(((await db.sequelize.query("SELECT COUNT(*) AS n FROM export_assessments", { type: "SELECT" })) as { n: number }[])[0]!.n);

beforeAll(async () => {
  db = await createTestDatabase("exports", { asDefault: true });
  fx = await createFixture(db.models);
  ctx = { config: getConfig({ NODE_ENV: "test" }), io: null, bus: new Bus(), clock: systemClock, services: new Map() };
  store = await startObjectStore(ctx, { port: 0 });
  ctx.services.set(store.name, store);
  setServerContext(ctx);
  // the loop's stored settings are the recording's (range, period, tuning in seconds, no dead time)
  const c = rec.config;
  await db.sequelize.query(
    "UPDATE loops SET telemetry_period_s = ?, pv_lo = ?, pv_hi = ?, kind = ?, gain_kind = 'gain', gain_value = ?, ti_value = ?, ti_units = 's', td_value = 0, action = ?, mv_lo = 0, mv_hi = 100, mv_limit_lo = NULL, mv_limit_hi = NULL, dead_time_s = NULL WHERE id = ?",
    { replacements: [c.samplePeriodS, c.pvLo, c.pvHi, c.kind, c.controller.kp, c.controller.ti, c.controller.action, fx.loopId] },
  );
}, 120_000);
afterAll(async () => {
  setServerContext(null);
  await store?.stop();
  await db?.drop();
});

describe("assessing a historian export in the console", () => {
  let id = 0;

  it("an engineer's upload is assessed as `npm run assess` assesses the same file with the loop's settings, and kept (201)", async () => {
    as("engineer");
    const res = await listRoute.POST(upload(fx.loopId, CSV), lp(fx.loopId));
    expect(res.status).toBe(201);
    const body = (await res.json()) as { export: { id: number; rowCount: number; startsAt: string | null; label: string; confidence: number; report: { diagnosis: { label: string; confidence: number }; cautions: string[] }; pvMv: unknown[] } };
    id = body.export.id;
    expect(body.export.rowCount).toBe(rec.samples.length);
    expect(body.export.startsAt).toBe("2026-11-30T06:00:00.000Z");
    expect(body.export.pvMv.length).toBeGreaterThan(100);
    // The offline command on the same bytes and the loop's stored settings as LOOP.json.
    const { loops } = await loadAssessmentConfigs(db.sequelize, fx.loopId);
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-export-"));
    fs.writeFileSync(path.join(dir, "x.csv"), CSV);
    fs.writeFileSync(path.join(dir, "loop.json"), JSON.stringify(loops[0]!.config));
    const out = execFileSync("node", ["--import", "tsx", "scripts/assess.ts", path.join(dir, "x.csv"), "--config", path.join(dir, "loop.json"), "--json"], { encoding: "utf8" });
    fs.rmSync(dir, { recursive: true, force: true });
    const cli = JSON.parse(out.trim().split("\n").at(-1)!) as { diagnosis: { label: string; confidence: number; evidence: string[] } };
    expect(body.export.report.diagnosis).toEqual(cli.diagnosis);
    expect(body.export.label).toBe(cli.diagnosis.label);
    // the DEV recording's label (a sticking valve) is what the assessment reads on it (DEV is right 142/160; this one is)
    expect(body.export.label).toBe("valve-stiction");
    expect((await objectKeys()).filter((k) => k.includes(`/loops/${fx.loopId}/exports/`))).toHaveLength(1);
  });

  it("the loop's record lists it and a viewer reads it; an operator or viewer may not upload", async () => {
    as("viewer");
    const list = (await (await listRoute.GET(new Request(url(`/api/loops/${fx.loopId}/exports`)), lp(fx.loopId))).json()) as { exports: { id: number; filename: string; label: string }[] };
    expect(list.exports.map((e) => [e.id, e.filename, e.label])).toEqual([[id, "fic101-week48.csv", "valve-stiction"]]);
    const one = await oneRoute.GET(new Request(url(`/api/loops/${fx.loopId}/exports/${id}`)), ep(fx.loopId, id));
    expect(one.status).toBe(200);
    expect(((await one.json()) as { export: { report: { diagnosis: { label: string } } } }).export.report.diagnosis.label).toBe("valve-stiction");
    // the original file, byte for byte
    const file = await dataRoute.GET(new Request(url(`/api/loops/${fx.loopId}/exports/${id}/data`)), ep(fx.loopId, id));
    expect(file.status).toBe(200);
    expect(file.headers.get("content-disposition")).toContain("fic101-week48.csv");
    expect(Buffer.from(await file.arrayBuffer()).equals(Buffer.from(CSV))).toBe(true);
    for (const role of ["viewer", "operator"] as const) {
      as(role);
      expect((await listRoute.POST(upload(fx.loopId, CSV), lp(fx.loopId))).status).toBe(403);
    }
  });

  it("a bad file gets a 422 naming its line and stores nothing", async () => {
    as("engineer");
    const before = { rows: await rows(), keys: (await objectKeys()).length };
    const lines = CSV.split("\n");
    lines[5] = lines[5]!.replace(/,[^,]*$/, ",not-a-mode").replace(/^([^,]*),[^,]*/, "$1,abc");
    const res = await listRoute.POST(upload(fx.loopId, lines.join("\n"), "broken.csv"), lp(fx.loopId));
    expect(res.status).toBe(422);
    const body = (await res.json()) as { error: string };
    expect(body.error).toMatch(/line 6\b/i);
    expect(await rows()).toBe(before.rows);
    expect((await objectKeys()).length).toBe(before.keys);
  });

  it("another tenant's loop and another loop's export are 404", async () => {
    as("outsider");
    expect((await listRoute.GET(new Request(url(`/api/loops/${fx.loopId}/exports`)), lp(fx.loopId))).status).toBe(404);
    expect((await oneRoute.GET(new Request(url(`/api/loops/${fx.loopId}/exports/${id}`)), ep(fx.loopId, id))).status).toBe(404);
    expect((await dataRoute.GET(new Request(url(`/api/loops/${fx.loopId}/exports/${id}/data`)), ep(fx.loopId, id))).status).toBe(404);
    as("engineer");
    expect((await oneRoute.GET(new Request(url(`/api/loops/${fx.otherLoopId}/exports/${id}`)), ep(fx.otherLoopId, id))).status).toBe(404);
  });
});
