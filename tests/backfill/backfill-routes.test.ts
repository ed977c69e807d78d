/**
 * The backfill routes: the CSV arrives as a streamed text/csv body (the request guard refuses
 * other types), another tenant's loop is 404 like a missing one, the list shows the recorded job
 * and its counts, and progress/cancel of an unknown job are 404. The session guard is replaced
 * by a stand-in (it has its own tests); the pipeline is stood in by its BackfillHost alone.
 */
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import { publicOrigin } from "@/lib/config";
import { setServerContext } from "@/lib/data/server-context";
import { Bus, type ServerContext, type Service } from "@/server/context";
import { BackfillHost } from "@/server/backfill/host";
import { HistoryWriter } from "@/server/history/writer";
import { loadLoopConfigs } from "@/server/ingest/loop-source";
import { TrackerRegistry } from "@/server/tracking/registry";
import { createPipelineFixture, PiLoop, type PipelineTenant } from "../pipeline/fixture";
import { testContext, ManualClock } from "../pipeline/helpers";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { signInAs } from "@/tests/helpers/guard-stand-in";

vi.mock("@/lib/auth/guard", async () => (await import("@/tests/helpers/guard-stand-in")).guardStandIn({ checkRole: false }));

const list = await import("@/app/api/loops/[loopId]/backfills/route");
const one = await import("@/app/api/loops/[loopId]/backfills/[jobId]/route");

let db: TestDatabase;
let fx: { a: PipelineTenant; b: PipelineTenant };
let ctx: ServerContext;
const NOW = Math.floor(Date.now() / 60_000) * 60_000;

const loopParams = (loopId: number, jobId?: number) => ({ params: Promise.resolve({ loopId: String(loopId), ...(jobId === undefined ? {} : { jobId: String(jobId) }) }) });

function upload(loopId: number, csv: string, type = "text/csv") {
  const bytes = Buffer.from(csv);
  // A body that arrives in pieces, as an upload does.
  const body = new ReadableStream<Uint8Array>({
    start(c) {
      for (let i = 0; i < bytes.length; i += 4096) c.enqueue(new Uint8Array(bytes.subarray(i, i + 4096)));
      c.close();
    },
  });
  const init: RequestInit & { duplex: "half" } = { method: "POST", headers: { "content-type": type, origin: publicOrigin(), "content-length": String(bytes.length) }, body, duplex: "half" };
  return list.POST(new Request(`http://127.0.0.1/api/loops/${loopId}/backfills?file=north-tic.csv`, init), loopParams(loopId));
}

beforeAll(async () => {
  db = await createTestDatabase("bfroutes", { asDefault: true });
  fx = await createPipelineFixture(db.models);
  const clock = new ManualClock(NOW);
  ctx = testContext(clock);
  const loops = await loadLoopConfigs(db.sequelize);
  const registry = new TrackerRegistry({ bus: new Bus(), clock }, loops.flatMap((l) => (l.config ? [l.config] : [])));
  const backfill = new BackfillHost({ sequelize: db.sequelize, writer: new HistoryWriter(db.sequelize), registry, bus: ctx.bus, clock, secondRetentionH: 6, minuteRetentionD: 180 });
  ctx.services.set("pipeline", { name: "pipeline", backfill, health: () => ({ status: "ok" }), stop: async () => undefined } as unknown as Service);
  setServerContext(ctx);
  const user = await db.models.User.create({ email: "engineer@acme-test.example", name: "Engineer", passwordHash: "x" });
  signInAs({
    userId: user.id,
    email: "engineer@acme-test.example",
    name: "Engineer",
    tenantId: fx.a.id,
    tenantSlug: fx.a.slug,
    tenantName: "Acme",
    role: "engineer",
  });
});
afterAll(async () => {
  setServerContext(null);
  await db?.drop();
});

describe("backfill routes", () => {
  const sim = new PiLoop();
  const csv = ["t,sp,pv,mv,mode", ...Array.from({ length: 900 }, (_, k) => sim.next(NOW - 3_600_000 + k * 1000)).map((s) => `${s.t / 1000},${s.sp},${s.pv},${s.mv},${s.mode}`)].join("\n");

  it("takes a streamed text/csv body and answers with the outcome; lists it afterwards", async () => {
    const res = await upload(fx.a.loopId, csv);
    expect(res.status).toBe(201);
    const { backfill } = (await res.json()) as { backfill: { accepted: number; rejected: number; fileName: string; trained: boolean; bytesRead: number } };
    expect(backfill).toMatchObject({ accepted: 900, rejected: 0, fileName: "north-tic.csv", trained: true, bytesRead: Buffer.byteLength(csv) });
    const listed = (await (await list.GET(new Request("http://127.0.0.1/x"), loopParams(fx.a.loopId))).json()) as { running: unknown; recorded: { status: string; accepted: number }[] };
    expect(listed.running).toBeNull();
    expect(listed.recorded[0]).toMatchObject({ status: "done", accepted: 900 });
  });

  it("refuses another body type (415), another tenant's loop (404) and an unknown job (404)", async () => {
    expect((await upload(fx.a.loopId, csv, "application/json")).status).toBe(415);
    expect((await upload(fx.b.loopId, csv)).status).toBe(404);
    expect((await one.GET(new Request("http://127.0.0.1/x"), loopParams(fx.a.loopId, 999999))).status).toBe(404);
    const del = new Request("http://127.0.0.1/x", { method: "DELETE", headers: { origin: publicOrigin() } });
    expect((await one.DELETE(del, loopParams(fx.a.loopId, 999999))).status).toBe(404);
  });

  it("a file without the required columns fails with the reason (422) and writes nothing", async () => {
    const res = await upload(fx.a.loopId, "time,value\n1,2\n");
    expect(res.status).toBe(422);
    const { backfill } = (await res.json()) as { backfill: { status: string; message: string; accepted: number } };
    expect(backfill).toMatchObject({ status: "failed", accepted: 0 });
    expect(backfill.message).toMatch(/Line 1: the header lacks sp, pv, mv/);
    // an empty body is refused before any job starts; an empty stream (no declared length) fails the job
    expect((await upload(fx.a.loopId, "")).status).toBe(422);
    const host = (ctx.services.get("pipeline") as unknown as { backfill: BackfillHost }).backfill;
    const empty = await host.start({ tenantId: fx.a.id, loopId: fx.a.loopId, userId: null, fileName: "empty.csv", totalBytes: null, replaceModel: false }, (async function* () {})());
    expect(empty).toMatchObject({ status: "failed", accepted: 0 });
    expect(empty.message).toMatch(/empty/);
  });
});
