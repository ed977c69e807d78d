import mqtt, { type MqttClient } from "mqtt";
import { io as connect, type Socket } from "socket.io-client";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { hashDeviceSecret } from "@/lib/devices";
import type { ClientToServerEvents, ServerToClientEvents, WatchReply } from "@/lib/domain/events";
import type { LoopStateBrief, LoopStateDto, SampleDto } from "@/lib/domain/types";
import { isPipelineService, type PipelineService } from "@/server/pipeline";
import { createAuthFixture, FIXTURE_PASSWORD, type AuthFixture, type FixtureTenant } from "../auth/fixture";
import { authedFetch, signIn } from "../auth/helpers";
import { startTestServer, type TestServer } from "../setup/server";

// Realtime contract (docs/architecture.md §8) on the real server: telemetry of two tenants flows
// through the broker and pipeline; a client sees only its own tenant's loops and may watch only
// its own tenant's loop.

type ClientSocket = Socket<ServerToClientEvents, ClientToServerEvents>;

let srv: TestServer;
let fx: AuthFixture;
let pipeline: PipelineService;
const sockets: ClientSocket[] = [];
const devices: MqttClient[] = [];

async function device(t: FixtureTenant): Promise<MqttClient> {
  const secret = `${t.slug}-secret-0123456789abcdef`;
  await srv.db.models.DeviceCredential.create({
    tenantId: t.id,
    siteId: t.siteId,
    name: `${t.slug} gateway`,
    clientId: `${t.slug}-gw`,
    keyId: `${t.slug}-gw`,
    secretHash: hashDeviceSecret(secret, srv.server.ctx.config.DEVICE_SECRET_PEPPER),
    createdBy: null,
  });
  const c = await mqtt.connectAsync(`mqtt://127.0.0.1:${pipeline.broker.address()!.port}`, { username: `${t.slug}-gw`, password: secret, clientId: `${t.slug}-gw`, reconnectPeriod: 0 });
  devices.push(c);
  return c;
}

async function socketOf(email: string): Promise<ClientSocket> {
  const r = await signIn(srv.url, email, FIXTURE_PASSWORD);
  if (!r.session) throw new Error(`sign-in failed: ${r.error}`);
  const s: ClientSocket = connect(srv.url, { transports: ["websocket"], extraHeaders: { origin: srv.url, cookie: r.jar.header() }, reconnection: false, forceNew: true });
  sockets.push(s);
  await new Promise<void>((resolve, reject) => {
    s.once("connect", () => resolve());
    s.once("connect_error", (e) => reject(e));
  });
  return s;
}

const watch = (s: ClientSocket, loopId: number) => new Promise<WatchReply>((resolve) => s.emit("loop:watch", loopId, resolve));

beforeAll(async () => {
  srv = await startTestServer({ seed: false });
  fx = await createAuthFixture(srv.db.models);
  const svc = srv.server.ctx.services.get("pipeline");
  if (!isPipelineService(svc)) throw new Error("the test server runs no pipeline");
  pipeline = svc;
  // The fixture's loops were created after the pipeline loaded its configuration.
  await pipeline.reloadLoop(fx.a.loopId);
  await pipeline.reloadLoop(fx.b.loopId);
}, 300_000);

afterAll(async () => {
  for (const s of sockets) s.disconnect();
  await Promise.all(devices.map((d) => d.endAsync(true).catch(() => undefined)));
  await srv?.stop();
});

describe("realtime tenant isolation", () => {
  it("sends each client only its own tenant's loop states and samples", async () => {
    const viewerA = await socketOf(fx.a.users.viewer.email);
    const viewerB = await socketOf(fx.b.users.viewer.email);
    const empty = () => ({ states: [] as LoopStateBrief[][], details: [] as LoopStateDto[], samples: [] as { loopId: number; samples: SampleDto[] }[] });
    const got = { a: empty(), b: empty() };
    viewerA.on("loop:state", (batch) => got.a.states.push(batch));
    viewerA.on("loop:detail", (state) => got.a.details.push(state));
    viewerA.on("loop:samples", (batch) => got.a.samples.push(batch));
    viewerB.on("loop:state", (batch) => got.b.states.push(batch));
    viewerB.on("loop:detail", (state) => got.b.details.push(state));
    viewerB.on("loop:samples", (batch) => got.b.samples.push(batch));

    // Watching: own loop yes; the other tenant's loop is answered like a loop that does not exist.
    expect(await watch(viewerA, fx.a.loopId)).toEqual({ ok: true, loopId: fx.a.loopId });
    expect(await watch(viewerB, fx.a.loopId)).toEqual({ ok: false, error: "Loop not found." });
    expect(await watch(viewerB, 999_999)).toEqual({ ok: false, error: "Loop not found." });
    expect(await watch(viewerB, fx.b.loopId)).toEqual({ ok: true, loopId: fx.b.loopId });

    const devA = await device(fx.a);
    const devB = await device(fx.b);
    const started = Date.now();
    for (let k = 0; k < 12; k++) {
      const t = Date.now();
      const s = (sp: number) => JSON.stringify({ t, sp, pv: sp - 1 + Math.sin(k), mv: 40 + k, mode: "auto" });
      await devA.publishAsync(`rg/${fx.a.slug}/north/fic-101/samples`, s(50), { qos: 1 });
      await devB.publishAsync(`rg/${fx.b.slug}/north/fic-101/samples`, s(20), { qos: 1 });
      await new Promise((r) => setTimeout(r, 500));
    }
    await new Promise((r) => setTimeout(r, 800));
    const elapsedS = (Date.now() - started) / 1000;

    const aLoops = new Set(got.a.states.flat().map((s) => s.loopId));
    const bLoops = new Set(got.b.states.flat().map((s) => s.loopId));
    expect([...aLoops]).toEqual([fx.a.loopId]);
    expect([...bLoops]).toEqual([fx.b.loopId]);
    expect(got.a.states.flat().every((s) => s.tenantId === fx.a.id)).toBe(true);
    expect(got.b.states.flat().every((s) => s.tenantId === fx.b.id)).toBe(true);
    expect(got.a.samples.every((b) => b.loopId === fx.a.loopId)).toBe(true);
    expect(got.b.samples.every((b) => b.loopId === fx.b.loopId)).toBe(true);
    expect(got.a.samples.flatMap((b) => b.samples)).toHaveLength(12);
    expect(got.b.samples.flatMap((b) => b.samples.map((s) => s.sp))).toEqual(new Array(12).fill(20));
    // Batched: at most one loop:state batch per 500 ms per tenant (+1 for the window's edges).
    expect(got.a.states.length).toBeLessThanOrEqual(Math.ceil(elapsedS * 2) + 1);
    // loop:state carries summaries (no covariances, zeros, polynomial, last sample); the watched
    // loop's full state comes as loop:detail, of the socket's own tenant only.
    expect(got.a.states.length).toBeGreaterThan(0);
    for (const st of got.a.states.flat()) {
      expect(Object.keys(st).sort()).toEqual(
        ["at", "dataPoles", "dataPolesKind", "dominant", "estimationPeriodS", "gainHeadroom", "juryStable", "loopId", "modelPoles", "receivedAt", "rimDistance", "spectralRadius", "stateReason", "tenantId", "trackerState", "decayRatio", "polesFrom", "oscillation", "routine"].sort(),
      );
      for (const p of [...st.modelPoles, ...st.dataPoles]) expect(Object.keys(p).sort()).toEqual(["im", "radius", "re"]);
    }
    expect(got.a.details.length).toBeGreaterThan(0);
    expect(got.b.details.length).toBeGreaterThan(0);
    expect(got.a.details.every((d) => d.loopId === fx.a.loopId && d.tenantId === fx.a.id && "characteristic" in d && "last" in d && "zeros" in d)).toBe(true);
    expect(got.b.details.every((d) => d.loopId === fx.b.loopId && d.tenantId === fx.b.id)).toBe(true);
    expect(got.a.details.length).toBeLessThanOrEqual(Math.ceil(elapsedS * 2) + 1);
    // the summary of a moment is the full state of that moment, rounded (server/realtime/summary.ts)
    const lastDetail = got.a.details.at(-1)!;
    const sameMoment = got.a.states.flat().find((s) => s.at === lastDetail.at);
    expect(sameMoment).toBeDefined();
    expect(sameMoment!.trackerState).toBe(lastDetail.trackerState);
    expect(sameMoment!.modelPoles).toHaveLength(lastDetail.modelPoles.length);
    if (lastDetail.spectralRadius !== null) expect(Math.abs(sameMoment!.spectralRadius! - lastDetail.spectralRadius)).toBeLessThanOrEqual(5e-5);

    // After loop:unwatch the samples and full states stop; summaries (tenant-wide) continue.
    viewerA.emit("loop:unwatch", fx.a.loopId);
    await new Promise((r) => setTimeout(r, 100));
    const before = got.a.samples.length;
    const detailsBefore = got.a.details.length;
    const statesBefore = got.a.states.length;
    for (let k = 0; k < 3; k++) {
      await devA.publishAsync(`rg/${fx.a.slug}/north/fic-101/samples`, JSON.stringify({ t: Date.now(), sp: 55, pv: 49 + k, mv: 41, mode: "auto" }), { qos: 1 });
      await new Promise((r) => setTimeout(r, 500));
    }
    await new Promise((r) => setTimeout(r, 700));
    expect(got.a.samples.length).toBe(before);
    expect(got.a.details.length).toBe(detailsBefore);
    expect(got.a.states.length).toBeGreaterThan(statesBefore);
  });
});

describe("loop API on the real server", () => {
  const get = async (email: string, path: string) => {
    const r = await signIn(srv.url, email, FIXTURE_PASSWORD);
    return authedFetch(srv.url, r.jar, path);
  };

  it("lists only the tenant's loops, hides another tenant's loop (404) and refuses bad parameters (422)", async () => {
    const list = await get(fx.a.users.viewer.email, "/api/loops");
    expect(list.status).toBe(200);
    const body = (await list.json()) as { loops: { id: number; tenantId: number; tag: string }[] };
    expect(body.loops.map((l) => [l.id, l.tenantId, l.tag])).toEqual([[fx.a.loopId, fx.a.id, "FIC-101"]]);

    expect((await get(fx.b.users.viewer.email, `/api/loops/${fx.a.loopId}`)).status).toBe(404);
    expect((await get(fx.a.users.viewer.email, `/api/loops/${fx.a.loopId}`)).status).toBe(200);
    const from = new Date(Date.now() - 600_000).toISOString();
    const to = new Date().toISOString();
    expect((await get(fx.b.users.viewer.email, `/api/loops/${fx.a.loopId}/history?from=${from}&to=${to}`)).status).toBe(404);
    expect((await get(fx.a.users.viewer.email, `/api/loops/${fx.a.loopId}/history?from=${to}&to=${from}`)).status).toBe(422);
    expect((await get(fx.a.users.viewer.email, `/api/loops/not-a-number/history?from=${from}&to=${to}`)).status).toBe(422);
    expect((await get(fx.a.users.viewer.email, `/api/loops/${fx.a.loopId}/history?from=${from}&to=${to}&maxPoints=50`)).status).toBe(200);
    expect((await authedFetch(srv.url, null, "/api/loops")).status).toBe(401);
  });

  it("serves ingest diagnostics to admins only, with their own tenant's devices", async () => {
    expect((await get(fx.a.users.engineer.email, "/api/diagnostics/ingest")).status).toBe(403);
    const r = await get(fx.a.users.admin.email, "/api/diagnostics/ingest");
    expect(r.status).toBe(200);
    const body = (await r.json()) as { running: boolean; devices: { device: string; acceptedSamples: number }[] };
    expect(body.running).toBe(true);
    expect(body.devices.map((d) => d.device)).toEqual([`${fx.a.slug}-gw`]);
    expect(body.devices[0]!.acceptedSamples).toBeGreaterThan(0);
  });
});
