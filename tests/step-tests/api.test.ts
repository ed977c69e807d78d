/**
 * The step-test routes end to end against the real S3 stand-in (s3rver on loopback, port 0) and
 * a real MariaDB: upload -> stored object + row, download returns the same bytes, refusals store
 * nothing, role matrix, tenancy (404), apply -> loop changed + config_changes with the reason.
 * The session guard is replaced by a stand-in applying the same role rule (roleAtLeast) to a
 * chosen user, as in tests/alarms/api.test.ts.
 */
import { ListObjectsV2Command } from "@aws-sdk/client-s3";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import { getConfig, publicOrigin } from "@/lib/config";
import { setServerContext } from "@/lib/data/server-context";
import type { Role } from "@/lib/domain/types";
import { Bus, systemClock, type ServerContext } from "@/server/context";
import { startObjectStore, type ObjectStoreService } from "@/server/objectstore";
import { createFixture, type Fixture } from "../alarms/helpers";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { stepTestCsv } from "./simulate";
import { signInAs } from "@/tests/helpers/guard-stand-in";
import { jsonRequest } from "@/tests/helpers/json-request";

vi.mock("@/lib/auth/guard", async () => (await import("@/tests/helpers/guard-stand-in")).guardStandIn());

const list = await import("@/app/api/loops/[loopId]/step-tests/route");
const one = await import("@/app/api/loops/[loopId]/step-tests/[stepTestId]/route");
const data = await import("@/app/api/loops/[loopId]/step-tests/[stepTestId]/data/route");
const apply = await import("@/app/api/loops/[loopId]/step-tests/[stepTestId]/apply/route");

let db: TestDatabase;
let fx: Fixture;
let store: ObjectStoreService;
let ctx: ServerContext;
const changed: number[] = [];

// Invented plant for loop FIC-101 (PV 0-100 m3/h, MV 0-100 %, telemetry 1 s): K = 1.2 m3/h per %,
// tau = 8 s, L = 3 s, logged every 0.5 s. A non-ASCII comment checks the byte-exact round trip.
const CSV =
  "# Prüfstand Nord, invented demo data: Ω-Werk\n" +
  stepTestCsv({
    plant: { K: 1.2, tau: 8, L: 3 },
    steps: [
      { t: 20, du: 10 },
      { t: 100, du: -10 },
      { t: 170, du: 5 },
    ],
    mv0: 40,
    pv0: 50,
    T: 0.5,
    duration: 240,
    noiseStd: 0.05,
    seed: 3,
    mode: "manual",
  });

const url = (p: string) => `http://127.0.0.1${p}`;
const as = (role: Role | "outsider" | null) => {
  signInAs(role === null ? null : role === "outsider" ? fx.outsider : fx.users[role]);
};
const lp = (loopId: number) => ({ params: Promise.resolve({ loopId: String(loopId) }) });
const sp = (loopId: number, stepTestId: number | string) => ({ params: Promise.resolve({ loopId: String(loopId), stepTestId: String(stepTestId) }) });

function upload(loopId: number, content: string | Uint8Array, filename = "fic101-bump.csv", extra: Record<string, string> = {}): Request {
  const form = new FormData();
  form.set("file", new Blob([typeof content === "string" ? content : new Uint8Array(content)], { type: "text/csv" }), filename);
  for (const [k, v] of Object.entries(extra)) form.set(k, v);
  return new Request(url(`/api/loops/${loopId}/step-tests`), { method: "POST", headers: { origin: publicOrigin() }, body: form });
}
const postJson = (path: string, body: unknown) => jsonRequest("POST", path, body);

async function objectKeys(): Promise<string[]> {
  const r = await store.client.send(new ListObjectsV2Command({ Bucket: store.bucket }));
  return (r.Contents ?? []).map((c) => c.Key!).sort();
}
async function stepTestRows(): Promise<number> {
  return db.models.StepTest.count();
}

interface Detail {
  id: number;
  filename: string;
  rowCount: number;
  periodS: number;
  result: {
    continuous: { gain: number; timeConstantS: number; deadTimeS: number };
    identification: { fitPercent: number };
    proposal: { estimationPeriodS: number; modelStructure: { na: number; nb: number; nk: number } };
  };
}

beforeAll(async () => {
  db = await createTestDatabase("steptests", { asDefault: true });
  fx = await createFixture(db.models);
  ctx = { config: getConfig({ NODE_ENV: "test" }), io: null, bus: new Bus(), clock: systemClock, services: new Map() };
  store = await startObjectStore(ctx, { port: 0 });
  ctx.services.set(store.name, store);
  ctx.bus.on("loop:config-changed", (id) => changed.push(id));
  setServerContext(ctx);
});
afterAll(async () => {
  setServerContext(null);
  await store?.stop();
  await db?.drop();
});

describe("step-test upload and download", () => {
  let id = 0;

  it("the object store listens on loopback only", () => {
    expect(store.endpoint).toMatch(/^http:\/\/127\.0\.0\.1:\d+$/);
    expect(store.port).toBeGreaterThan(0);
  });

  it("an engineer's upload stores the object and the row and returns the identified plant (201)", async () => {
    as("engineer");
    const res = await list.POST(upload(fx.loopId, CSV), lp(fx.loopId));
    expect(res.status).toBe(201);
    const { stepTest } = (await res.json()) as { stepTest: Detail };
    id = stepTest.id;
    expect(stepTest.filename).toBe("fic101-bump.csv");
    expect(stepTest.rowCount).toBe(481);
    expect(stepTest.periodS).toBe(0.5);
    // Truth: the simulated K = 1.2, tau = 8 s, L = 3 s (tolerances as in identify.test.ts).
    expect(Math.abs(stepTest.result.continuous.gain - 1.2) / 1.2).toBeLessThan(0.03);
    expect(Math.abs(stepTest.result.continuous.timeConstantS - 8) / 8).toBeLessThan(0.05);
    expect(Math.abs(stepTest.result.continuous.deadTimeS - 3)).toBeLessThan(0.5);
    expect(stepTest.result.identification.fitPercent).toBeGreaterThan(90);
    const keys = await objectKeys();
    expect(keys).toHaveLength(1);
    expect(keys[0]).toMatch(new RegExp(`^tenants/${fx.tenantId}/loops/${fx.loopId}/step-tests/[0-9a-f-]{36}\\.csv$`));
    const row = await db.models.StepTest.findByPk(id);
    expect(row?.objectKey).toBe(keys[0]);
    expect(row?.tenantId).toBe(fx.tenantId);
    expect(row?.uploadedBy).toBe(fx.users.engineer.userId);
  });

  it("download returns the same bytes as uploaded, as a CSV attachment", async () => {
    as("viewer");
    const res = await data.GET(new Request(url(`/api/loops/${fx.loopId}/step-tests/${id}/data`)), sp(fx.loopId, id));
    expect(res.status).toBe(200);
    expect(res.headers.get("content-type")).toMatch(/^text\/csv/);
    expect(res.headers.get("content-disposition")).toBe('attachment; filename="fic101-bump.csv"');
    const got = Buffer.from(await res.arrayBuffer());
    expect(got.equals(Buffer.from(CSV, "utf8"))).toBe(true);
  });

  it("viewers list and read results; the list carries the headline numbers", async () => {
    as("viewer");
    const res = await list.GET(new Request(url(`/api/loops/${fx.loopId}/step-tests`)), lp(fx.loopId));
    expect(res.status).toBe(200);
    const body = (await res.json()) as { stepTests: { id: number; fitPercent: number; proposedPeriodS: number }[] };
    expect(body.stepTests.map((s) => s.id)).toEqual([id]);
    expect(body.stepTests[0]!.fitPercent).toBeGreaterThan(90);
    const r = await one.GET(new Request(url(`/api/loops/${fx.loopId}/step-tests/${id}`)), sp(fx.loopId, id));
    expect(r.status).toBe(200);
    const full = ((await r.json()) as { stepTest: Detail & { gainPercent: number; timeConstantS: number; deadTimeS: number } }).stepTest;
    expect(full.result.proposal.estimationPeriodS).toBeGreaterThan(0);
    // The list's headline numbers (read by the database from the stored JSON) equal the full result's.
    const head = body.stepTests[0] as unknown as Record<string, unknown>;
    expect(head.fitPercent).toBeCloseTo(full.result.identification.fitPercent, 9);
    expect(head.gainPercent).toBeCloseTo(full.gainPercent, 9);
    expect(head.timeConstantS).toBeCloseTo(full.result.continuous.timeConstantS, 9);
    expect(head.deadTimeS).toBeCloseTo(full.result.continuous.deadTimeS, 9);
    expect(head.proposedPeriodS).toBe(full.result.proposal.estimationPeriodS);
    expect(head.createdAt).toMatch(/^\d{4}-\d{2}-\d{2}T/);
    expect((await one.GET(new Request(url("/x")), sp(fx.loopId, "abc"))).status).toBe(422);
    expect((await one.GET(new Request(url("/x")), sp(fx.loopId, id + 999))).status).toBe(404);
  });

  it("a bad file is a 422 naming the line and column, and nothing is stored", async () => {
    as("engineer");
    const before = { keys: await objectKeys(), rows: await stepTestRows() };
    const lines = CSV.split("\n");
    lines[10] = lines[10]!.replace(/,([^,]+),manual$/, ",n/a,manual"); // the PV cell of file line 11
    const res = await list.POST(upload(fx.loopId, lines.join("\n")), lp(fx.loopId));
    expect(res.status).toBe(422);
    const body = (await res.json()) as { error: string; details: { row: number; column: number; columnName: string } };
    expect(body.details).toEqual({ row: 11, column: 3, columnName: "pv" });
    expect(body.error).toMatch(/^Line 11, column 3 \(pv\)/);
    expect(await objectKeys()).toEqual(before.keys);
    expect(await stepTestRows()).toBe(before.rows);
  });

  it("a file over 5 MB is a 413 and nothing is stored", async () => {
    as("engineer");
    const before = await stepTestRows();
    const big = new Uint8Array(5 * 1024 * 1024 + 10).fill(0x31);
    const res = await list.POST(upload(fx.loopId, big), lp(fx.loopId));
    expect(res.status).toBe(413);
    expect(await stepTestRows()).toBe(before);
    expect(await objectKeys()).toHaveLength(1);
  });

  it("a request without a file is a 422", async () => {
    as("engineer");
    const form = new FormData();
    form.set("note", "no file");
    const res = await list.POST(new Request(url(`/api/loops/${fx.loopId}/step-tests`), { method: "POST", headers: { origin: publicOrigin() }, body: form }), lp(fx.loopId));
    expect(res.status).toBe(422);
  });

  it("role matrix: viewer and operator 403 on upload and apply; signed out 401", async () => {
    for (const role of ["viewer", "operator"] as const) {
      as(role);
      expect((await list.POST(upload(fx.loopId, CSV), lp(fx.loopId))).status).toBe(403);
      expect((await apply.POST(postJson("/x", { reason: "tighter estimation", apply: ["estimationPeriod"] }), sp(fx.loopId, id))).status).toBe(403);
    }
    as(null);
    expect((await list.GET(new Request(url("/x")), lp(fx.loopId))).status).toBe(401);
    expect(await stepTestRows()).toBe(1);
  });

  it("another tenant's loop or step test is a 404, for reading and for uploading", async () => {
    as("outsider"); // an admin of the other tenant
    expect((await list.GET(new Request(url("/x")), lp(fx.loopId))).status).toBe(404);
    expect((await one.GET(new Request(url("/x")), sp(fx.loopId, id))).status).toBe(404);
    expect((await data.GET(new Request(url("/x")), sp(fx.loopId, id))).status).toBe(404);
    expect((await apply.POST(postJson("/x", { reason: "mine now", apply: ["estimationPeriod"] }), sp(fx.loopId, id))).status).toBe(404);
    expect((await list.POST(upload(fx.loopId, CSV), lp(fx.loopId))).status).toBe(404);
    as("engineer");
    expect((await list.POST(upload(fx.otherLoopId, CSV), lp(fx.otherLoopId))).status).toBe(404);
    // The other tenant's loop id with our step test id does not reach our test either.
    expect((await one.GET(new Request(url("/x")), sp(fx.otherLoopId, id))).status).toBe(404);
    expect(await stepTestRows()).toBe(1);
    expect(await objectKeys()).toHaveLength(1);
  });

  it("apply needs a reason and a choice (422)", async () => {
    as("engineer");
    expect((await apply.POST(postJson("/x", { apply: ["estimationPeriod"] }), sp(fx.loopId, id))).status).toBe(422);
    expect((await apply.POST(postJson("/x", { reason: "  ", apply: ["estimationPeriod"] }), sp(fx.loopId, id))).status).toBe(422);
    expect((await apply.POST(postJson("/x", { reason: "from the bump test", apply: [] }), sp(fx.loopId, id))).status).toBe(422);
    expect((await apply.POST(postJson("/x", { reason: "from the bump test", apply: ["controllerGain"] }), sp(fx.loopId, id))).status).toBe(422);
    expect(await db.models.ConfigChange.count({ where: { entity: "loop", entityId: fx.loopId } })).toBe(0);
  });

  it("an engineer's apply changes the loop and writes config_changes with the reason and MOC reference", async () => {
    as("engineer");
    const detail = (await (await one.GET(new Request(url("/x")), sp(fx.loopId, id))).json()) as { stepTest: Detail };
    const p = detail.stepTest.result.proposal;
    const loopBefore = await db.models.Loop.findByPk(fx.loopId);
    const res = await apply.POST(
      postJson("/x", { reason: "Bump test of 3 Nov shows tau about 8 s", mocReference: "MOC-2026-114", apply: ["estimationPeriod", "modelStructure"] }),
      sp(fx.loopId, id),
    );
    expect(res.status).toBe(200);
    const body = (await res.json()) as { changed: Record<string, { from: unknown; to: unknown }> };
    const loop = await db.models.Loop.findByPk(fx.loopId);
    expect(loop!.estimationPeriodS).toBe(p.estimationPeriodS);
    expect([loop!.na, loop!.nb, loop!.nk]).toEqual([p.modelStructure.na, p.modelStructure.nb, p.modelStructure.nk]);
    expect(body.changed.estimationPeriodS).toEqual({ from: loopBefore!.estimationPeriodS, to: p.estimationPeriodS });
    const log = await db.models.ConfigChange.findAll({ where: { entity: "loop", entityId: fx.loopId } });
    expect(log).toHaveLength(1);
    expect(log[0]!.reason).toBe("Bump test of 3 Nov shows tau about 8 s");
    expect(log[0]!.mocReference).toBe("MOC-2026-114");
    expect(log[0]!.userId).toBe(fx.users.engineer.userId);
    const diff = typeof log[0]!.diff === "string" ? (JSON.parse(log[0]!.diff) as Record<string, unknown>) : log[0]!.diff;
    expect(diff.estimationPeriodS).toEqual({ from: loopBefore!.estimationPeriodS, to: p.estimationPeriodS });
    expect(diff.stepTest).toEqual({ from: null, to: `#${id} fic101-bump.csv` });
    expect(changed).toContain(fx.loopId);
  });

  it("an object store failure is a 503 with nothing recorded; a failed row write removes the stored object", async () => {
    const { uploadStepTest } = await import("@/lib/step-tests/service");
    const rows = await stepTestRows();
    const failing = { put: async () => Promise.reject(new Error("connection refused")), get: async () => null, delete: async () => {} };
    await expect(uploadStepTest(fx.users.engineer, fx.loopId, { name: "a.csv", bytes: new TextEncoder().encode(CSV) }, {}, failing)).rejects.toMatchObject({ status: 503 });
    expect(await stepTestRows()).toBe(rows);

    const keysBefore = await objectKeys();
    const spy = vi.spyOn(db.models.StepTest, "create").mockRejectedValueOnce(new Error("lost the database"));
    try {
      await expect(uploadStepTest(fx.users.engineer, fx.loopId, { name: "b.csv", bytes: new TextEncoder().encode(CSV) }, {}, store)).rejects.toThrow("lost the database");
    } finally {
      spy.mockRestore();
    }
    expect(await objectKeys()).toEqual(keysBefore);
    expect(await stepTestRows()).toBe(rows);
  });
});
