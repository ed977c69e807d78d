/**
 * The alarm route handlers: role matrix, tenancy, 422 on bad input, ISO 8601 times, policies with
 * the change log and immediate effect. The session guard is replaced by a stand-in that applies
 * the same role rule (roleAtLeast) to a chosen user, so what is under test is each route's choice
 * of minimum role, its input checks and the service behind it.
 */
import { QueryTypes } from "sequelize";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import { setServerContext } from "@/lib/data/server-context";
import type { Role } from "@/lib/domain/types";
import { AlarmService } from "@/server/alarms/service";
import { startMail, type MailService } from "@/server/mail";
import { FakeClock, loopState, polesWithDecay, setUpAlarmDb, tempJournal, testContext } from "./helpers";
import { signInAs } from "@/tests/helpers/guard-stand-in";
import { jsonRequest } from "@/tests/helpers/json-request";

vi.mock("@/lib/auth/guard", async () => (await import("@/tests/helpers/guard-stand-in")).guardStandIn());

const list = await import("@/app/api/alarms/route");
const one = await import("@/app/api/alarms/[alarmId]/route");
const ack = await import("@/app/api/alarms/[alarmId]/acknowledge/route");
const shelve = await import("@/app/api/alarms/[alarmId]/shelve/route");
const unshelve = await import("@/app/api/alarms/[alarmId]/unshelve/route");
const oos = await import("@/app/api/alarms/[alarmId]/out-of-service/route");
const rts = await import("@/app/api/alarms/[alarmId]/return-to-service/route");
const kpis = await import("@/app/api/alarms/kpis/route");
const policies = await import("@/app/api/alarm-policies/route");
const outbox = await import("@/app/api/outbox/route");

const T0 = Date.UTC(2026, 3, 14, 9, 0, 0);
const suite = setUpAlarmDb("alarmapi", {
    onDelayS: 0,
    offDelayS: 0,
    advisoryOnDelayS: 0,
  });
let svc: AlarmService;
let clock: FakeClock;
let mail: MailService;

const url = (p: string) => `http://127.0.0.1${p}`;
const get = (path: string) => new Request(url(path));
const post = (path: string, body?: unknown) => jsonRequest("POST", path, body);
const put = (path: string, body: unknown) => jsonRequest("PUT", path, body);
const policyStatus = async (path: string, body: unknown) => (await policies.PUT(put(path, body))).status;
const p = (alarmId: number | string) => ({ params: Promise.resolve({ alarmId: String(alarmId) }) });
const as = (role: Role | "outsider") => {
  signInAs(role === "outsider" ? suite.fx.outsider : suite.fx.users[role]);
};

beforeAll(async () => {
  clock = new FakeClock(T0);
  const ctx = testContext(clock);
  svc = await AlarmService.start(ctx, {
    sequelize: suite.db.sequelize,
    journalPath: tempJournal(),
    quiet: true,
  });
  ctx.services.set("alarms", svc);
  mail = await startMail(ctx, { sinkPort: 0 });
  ctx.services.set("mail", mail);
  setServerContext(ctx);
});
afterAll(async () => {
  setServerContext(null);
  await svc?.stop();
  await mail?.stop();
});

function marginId(): number {
  return svc.list(suite.fx.tenantId, { loopId: suite.fx.loopId }).find((a) => a.condition === "margin")!.id;
}

describe("alarm API", () => {
  it("lists the tenant's alarms with ISO 8601 times, filtered; 422 on a bad filter; 401 signed out", async () => {
    signInAs(null);
    expect((await list.GET(get("/api/alarms"))).status).toBe(401);
    as("viewer");
    svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(0.42)));
    const r = await list.GET(get("/api/alarms?state=unacknowledged"));
    expect(r.status).toBe(200);
    const body = (await r.json()) as {
      alarms: { id: number; state: string; changedAt: string; tenantId: number }[];
    };
    expect(body.alarms).toHaveLength(1);
    expect(body.alarms[0]!.changedAt).toBe(new Date(T0).toISOString());
    expect((await list.GET(get("/api/alarms?state=bogus"))).status).toBe(422);
    expect(
      (
        await list.GET(
          get(
            `/api/alarms?from=${new Date(T0).toISOString()}&to=${new Date(T0 - 1).toISOString()}`,
          ),
        )
      ).status,
    ).toBe(422);
    expect((await list.GET(get("/api/alarms?from=yesterday"))).status).toBe(422);
    as("outsider");
    const other = (await (await list.GET(get("/api/alarms"))).json()) as {
      alarms: { tenantId: number }[];
    };
    expect(other.alarms.every((a) => a.tenantId === suite.fx.otherTenantId)).toBe(true);
  });

  it("role matrix: a viewer cannot acknowledge (403), an operator can; another tenant's alarm is 404", async () => {
    const id = marginId();
    as("viewer");
    expect(
      (await ack.POST(post(`/api/alarms/${id}/acknowledge`, { comment: "x" }), p(id))).status,
    ).toBe(403);
    as("outsider");
    expect(
      (await ack.POST(post(`/api/alarms/${id}/acknowledge`, { comment: "x" }), p(id))).status,
    ).toBe(404);
    as("operator");
    expect((await ack.POST(post(`/api/alarms/abc/acknowledge`, {}), p("abc"))).status).toBe(422);
    const r = await ack.POST(
      post(`/api/alarms/${id}/acknowledge`, { comment: "seen on the wall" }),
      p(id),
    );
    expect(r.status).toBe(200);
    expect(((await r.json()) as { alarm: { state: string } }).alarm.state).toBe("acknowledged");
    const again = await ack.POST(post(`/api/alarms/${id}/acknowledge`, {}), p(id));
    expect(again.status).toBe(409);
    expect(((await again.json()) as { error: string }).error).toMatch(/already acknowledged/);
  });

  it("shelve needs a reason (422) and respects the policy maximum; unshelve with no body; detail lists events", async () => {
    const id = marginId();
    as("operator");
    expect(
      (await shelve.POST(post(`/api/alarms/${id}/shelve`, { minutes: 30 }), p(id))).status,
    ).toBe(422);
    expect(
      (await shelve.POST(post(`/api/alarms/${id}/shelve`, { minutes: 100000, reason: "x" }), p(id)))
        .status,
    ).toBe(422);
    const s = await shelve.POST(
      post(`/api/alarms/${id}/shelve`, { minutes: 30, reason: "analyser calibration" }),
      p(id),
    );
    expect(s.status).toBe(200);
    expect(((await s.json()) as { alarm: { shelvedUntil: string } }).alarm.shelvedUntil).toBe(
      new Date(T0 + 30 * 60_000).toISOString(),
    );
    const u = await unshelve.POST(post(`/api/alarms/${id}/unshelve`), p(id));
    expect(u.status).toBe(200);
    expect(((await u.json()) as { alarm: { state: string } }).alarm.state).toBe("unacknowledged");
    as("viewer");
    // Events just journalled show at once (marked pending); occurrences once written.
    const early = (await (await one.GET(get(`/api/alarms/${id}`), p(id))).json()) as {
      events: { kind: string; pending: boolean }[];
    };
    expect(early.events[0]).toMatchObject({ kind: "unshelve" });
    await svc.flush();
    const d = (await (await one.GET(get(`/api/alarms/${id}`), p(id))).json()) as {
      events: { kind: string; comment: string | null }[];
      occurrences: unknown[];
    };
    expect(d.events.slice(0, 3).map((e) => e.kind)).toEqual(["unshelve", "shelve", "acknowledge"]);
    expect(d.events[1]!.comment).toBe("analyser calibration");
    expect(d.occurrences.length).toBeGreaterThanOrEqual(1);
  });

  it("out of service: operator 403, engineer with a reason", async () => {
    const id = marginId();
    as("operator");
    expect(
      (await oos.POST(post(`/api/alarms/${id}/out-of-service`, { reason: "x" }), p(id))).status,
    ).toBe(403);
    as("engineer");
    expect((await oos.POST(post(`/api/alarms/${id}/out-of-service`, {}), p(id))).status).toBe(422);
    expect(
      (
        await oos.POST(
          post(`/api/alarms/${id}/out-of-service`, { reason: "transmitter replaced" }),
          p(id),
        )
      ).status,
    ).toBe(200);
    expect((await rts.POST(post(`/api/alarms/${id}/return-to-service`), p(id))).status).toBe(200);
  });

  it("a policy that still sends a sluggish field gets 400 naming the field and where it went; nothing is stored", async () => {
    as("admin");
    const before = (await suite.db.sequelize.query("SELECT COUNT(*) AS n FROM config_changes", { type: QueryTypes.SELECT })) as { n: number }[];
    for (const [field, settings] of [
      ["sluggishMultiple", { onDelayS: 5, sluggishMultiple: 3 }],
      ["deadband.sluggish", { deadband: { decayRatio: 0.02, sluggish: 0.1 } }],
      ["enabled.sluggish", { enabled: { margin: true, sluggish: false } }],
    ] as const) {
      const res = await policies.PUT(put("/api/alarm-policies?scope=tenant", { settings, reason: "old client" }));
      expect(res.status, field).toBe(400);
      const body = (await res.json()) as { error: string; details: { path: string[]; message: string }[] };
      expect(body.error).toContain(field);
      expect(body.error).toMatch(/no longer an operator alarm.*sluggish-tuning finding on the engineering work list/);
      expect(body.details.map((d) => d.path.join("."))).toEqual([field]);
    }
    const after = (await suite.db.sequelize.query("SELECT COUNT(*) AS n FROM config_changes", { type: QueryTypes.SELECT })) as { n: number }[];
    expect(Number(after[0]!.n)).toBe(Number(before[0]!.n));
  });

  it("policies: an operator cannot change thresholds, an engineer cannot change tenant policy but can set a loop's; logged; effective at once", async () => {
    const settings = { decayRatio: { low: 0.3, high: 0.4 } };
    as("operator");
    expect(await policyStatus(`/api/alarm-policies?scope=loop&id=${suite.fx.loopId}`, { settings, reason: "r" })).toBe(403);
    as("engineer");
    expect(await policyStatus("/api/alarm-policies?scope=tenant", { settings, reason: "r" })).toBe(403);
    expect(await policyStatus(`/api/alarm-policies?scope=site&id=${suite.fx.siteId}`, { settings, reason: "r" })).toBe(403);
    expect(await policyStatus(`/api/alarm-policies?scope=loop&id=${suite.fx.loopId}`, { settings })).toBe(422);
    expect(await policyStatus(`/api/alarm-policies?scope=loop&id=${suite.fx.loopId}`, { settings: { decayRatio: { low: 0.5, high: 0.4 } }, reason: "r" })).toBe(422);
    expect(await policyStatus(`/api/alarm-policies?scope=loop&id=${suite.fx.otherLoopId}`, { settings, reason: "r" })).toBe(404);
    const ok = await policies.PUT(
      put(`/api/alarm-policies?scope=loop&id=${suite.fx.loopId}`, {
        settings: { ...settings, radius: { low: 0.95, high: 0.98 } },
        reason: "tighter after retune",
        mocReference: "MOC-2026-014",
      }),
    );
    expect(ok.status).toBe(200);
    const view = (await ok.json()) as {
      effective: { decayRatio: { low: number } };
      loops: {
        equivalents: { source: string; priority: string; timeConstantS: number | null }[];
      }[];
    };
    expect(view.effective.decayRatio.low).toBe(0.3);
    // ρ = 0.98 at the loop's 1 s estimation period is τ = -1/ln 0.98 = 49.5 s.
    const r98 = view.loops[0]!.equivalents.find(
      (e) => e.source === "radius" && e.priority === "high",
    )!;
    expect(r98.timeConstantS).toBeCloseTo(-1 / Math.log(0.98), 6);
    const [log] = (await suite.db.sequelize.query(
      "SELECT entity, reason, moc_reference, user_id FROM config_changes ORDER BY id DESC LIMIT 1",
      { type: QueryTypes.SELECT },
    )) as Record<string, unknown>[];
    expect(log).toMatchObject({
      entity: "alarm_policy",
      reason: "tighter after retune",
      moc_reference: "MOC-2026-014",
      user_id: suite.fx.users.engineer.userId,
    });
    // Effective without a restart: 0.45 is below the default high level 0.5 but above the new loop level 0.4.
    svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(0.45)));
    expect(
      svc.list(suite.fx.tenantId, { loopId: suite.fx.loopId }).find((a) => a.condition === "margin")!.priority,
    ).toBe("high");
    as("admin");
    expect(await policyStatus("/api/alarm-policies?scope=tenant", { settings: { onDelayS: 0, offDelayS: 0, radius: { low: 0.9, high: 0.95 } }, reason: "r" })).toBe(422);
    expect(await policyStatus("/api/alarm-policies?scope=tenant", { settings: { onDelayS: 0, offDelayS: 0, shelveMaxMinutes: 240 }, reason: "site review" })).toBe(200);
    as("viewer");
    const g = (await (await policies.GET(get("/api/alarm-policies?scope=tenant"))).json()) as {
      settings: { shelveMaxMinutes: number };
      loops: { tag: string }[];
    };
    expect(g.settings.shelveMaxMinutes).toBe(240);
    expect(g.loops.map((l) => l.tag)).toEqual(["FIC-101"]);
    expect((await policies.GET(get("/api/alarm-policies?scope=site"))).status).toBe(422);
  });

  it("outbox: admin only, and only the tenant's own messages", async () => {
    await mail.send({
      to: ["board@harrowgate.example"],
      subject: "mine",
      text: "x",
      headers: { "X-Rimguard-Tenant": String(suite.fx.tenantId) },
    });
    await mail.send({
      to: ["ops@quillon.example"],
      subject: "theirs",
      text: "y",
      headers: { "X-Rimguard-Tenant": String(suite.fx.otherTenantId) },
    });
    await mail.waitForMessages(2);
    as("engineer");
    expect((await outbox.GET()).status).toBe(403);
    as("admin");
    const body = (await (await outbox.GET()).json()) as {
      sink: boolean;
      messages: { subject: string; to: string[]; receivedAt: string }[];
    };
    expect(body.sink).toBe(true);
    expect(body.messages.map((m) => m.subject)).toEqual(["mine"]);
    expect(body.messages[0]!.to).toEqual(["board@harrowgate.example"]);
    expect(body.messages[0]!.receivedAt).toBe(new Date(clock.now()).toISOString());
  });

  it("KPIs of a period, with ISO times; 422 on a reversed period", async () => {
    as("viewer");
    const from = new Date(T0 - 3600_000).toISOString();
    const to = new Date(T0 + 3600_000).toISOString();
    const r = await kpis.GET(get(`/api/alarms/kpis?from=${from}&to=${to}`));
    expect(r.status).toBe(200);
    const k = (await r.json()) as { from: string; totalAlarms: number; intervals: number };
    expect(k.from).toBe(from);
    expect(k.intervals).toBe(12);
    expect(k.totalAlarms).toBeGreaterThanOrEqual(1);
    expect((await kpis.GET(get(`/api/alarms/kpis?from=${to}&to=${from}`))).status).toBe(422);
  });

  it("a comment or reason that is not well-formed Unicode (a lone surrogate) is 422 before it reaches the journal", async () => {
    as("engineer");
    const alarm = svc.list(suite.fx.tenantId, {})[0]!;
    const raw = (path: string, json: string) => jsonRequest("POST", path, json);
    const before = svc.get(suite.fx.tenantId, alarm.id);
    expect(before).not.toBeNull();
    for (const [route, json] of [
      [ack, '{"comment":"seen \\ud800"}'],
      [shelve, '{"minutes":30,"reason":"work \\udc00"}'],
      [oos, '{"reason":"\\ud83d broken transmitter"}'],
    ] as const) {
      const res = await route.POST(raw(`/api/alarms/${alarm.id}/x`, json), p(alarm.id));
      expect(res.status).toBe(422);
      expect(((await res.json()) as { error: string }).error).toMatch(/well-formed Unicode/);
    }
    expect(svc.get(suite.fx.tenantId, alarm.id)).toEqual(before);
  });
});
