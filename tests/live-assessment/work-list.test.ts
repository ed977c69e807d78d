/**
 * The engineering work list on MariaDB: one open item per loop and finding label (repeated
 * findings update it), the append-only status history, roles (engineers edit, viewers and
 * operators read), tenant isolation, the latest assessment kept and restored after a restart,
 * and finding mails only to the tenant's finding rules. Findings come from a real assessment of a
 * labelled DEV recording (simulators/benchmark), so the item holds the figures a practitioner reads.
 */
import { getConfig, publicOrigin } from "@/lib/config";
import { QueryTypes } from "sequelize";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import { assessLoop, parseLoopConfig, type LoopAssessmentReport } from "@/lib/assessment";
import { opensWorkItem } from "@/lib/domain/findings";
import type { Role } from "@/lib/domain/types";
import { Bus, systemClock, type ServerContext } from "@/server/context";
import { benchmarkPlan, generateRecording } from "@/simulators/benchmark/generate";
import { signInAs } from "@/tests/helpers/guard-stand-in";
import { createAuthFixture, fixtureContext, type AuthFixture } from "../auth/fixture";
import { createTestDatabase, type TestDatabase } from "../setup/db";

vi.mock("@/lib/auth/guard", async () => (await import("@/tests/helpers/guard-stand-in")).guardStandIn());

const itemRoute = await import("@/app/api/work-list/[itemId]/route");
const listRoute = await import("@/app/api/work-list/route");
const rulesRoute = await import("@/app/api/work-list/rules/route");
const findingRoute = await import("@/app/api/loops/[loopId]/finding/route");
const { recordFinding, saveAssessment } = await import("@/lib/work-list/record");
const { startLiveAssessment } = await import("@/server/assessment/service");

let db: TestDatabase;
let fx: AuthFixture;

const ctxOf = (t: AuthFixture["a"], role: Role) => fixtureContext(t, role, role);
const req = (method: string, body?: unknown) =>
  new Request("http://127.0.0.1/api/x", {
    method,
    headers: { "content-type": "application/json", origin: publicOrigin() },
    ...(body === undefined ? {} : { body: JSON.stringify(body) }),
  });
const params = <K extends string>(k: K, v: number) => ({ params: Promise.resolve({ [k]: String(v) } as Record<K, string>) });

const plan = benchmarkPlan();
/** A real assessment of a DEV recording, its verdict set to the label a rule under test needs (the rules read only label and confidence). */
function reportAs(base: LoopAssessmentReport, label: LoopAssessmentReport["diagnosis"]["label"], confidence: number): LoopAssessmentReport {
  return { ...base, diagnosis: { label, confidence, evidence: [`likely ${label} (test verdict)`] } };
}
let stiction: LoopAssessmentReport;
let aggressive: LoopAssessmentReport;

beforeAll(async () => {
  db = await createTestDatabase("wl", { asDefault: true });
  fx = await createAuthFixture(db.models);
  const rec = generateRecording("dev", plan.find((p) => p.label === "valve-stiction")!.index);
  const base = assessLoop(rec.samples, parseLoopConfig(rec.config));
  stiction = reportAs(base, "valve-stiction", 0.8);
  aggressive = reportAs(base, "aggressive-tuning", 0.75);
}, 120_000);
afterAll(async () => {
  await db?.drop();
});

const input = (t: AuthFixture["a"], report: LoopAssessmentReport, at: number) => ({ loopId: t.loopId, tenantId: t.id, siteId: t.siteId, at, report, windowSamples: report.samples, windowS: report.spanS });

describe("work list rules", () => {
  it("a finding at or below the confidence threshold opens nothing", async () => {
    expect(await recordFinding(db.sequelize, input(fx.a, reportAs(stiction, "valve-stiction", 0.6), Date.UTC(2026, 11, 2, 7)))).toEqual({ opened: null, updated: null });
  });

  it("one open item per loop and label: a repeated finding updates it; another label opens its own", async () => {
    const t0 = Date.UTC(2026, 11, 2, 8);
    const first = await recordFinding(db.sequelize, input(fx.a, stiction, t0));
    expect(first.opened).not.toBeNull();
    const again = await recordFinding(db.sequelize, input(fx.a, stiction, t0 + 60_000));
    expect(again).toEqual({ opened: null, updated: first.opened });
    const other = await recordFinding(db.sequelize, input(fx.a, aggressive, t0 + 120_000));
    expect(other.opened).not.toBeNull();
    expect(other.opened).not.toBe(first.opened);
    // A healthy verdict opens nothing but refreshes the latest figures of the open items.
    const healthy = { ...stiction, diagnosis: { label: "healthy" as const, confidence: 0.9, evidence: ["likely healthy"] } };
    expect(await recordFinding(db.sequelize, input(fx.a, healthy, t0 + 180_000))).toEqual({ opened: null, updated: null });

    signInAs(ctxOf(fx.a, "viewer"));
    const list = (await (await listRoute.GET(new Request("http://127.0.0.1/api/work-list"))).json()) as { items: { id: number; label: string; seenCount: number; figuresAtOpen: { label: string }; figuresLatest: { label: string } }[] };
    expect(list.items.map((i) => i.label).sort()).toEqual(["aggressive-tuning", "valve-stiction"]);
    const item = list.items.find((i) => i.label === "valve-stiction")!;
    expect(item.seenCount).toBe(2);
    expect(item.figuresAtOpen.label).toBe("valve-stiction");
    expect(item.figuresLatest.label).toBe("healthy");
    const n = await db.sequelize.query<{ n: number }>("SELECT COUNT(*) AS n FROM work_items WHERE loop_id = ?", { replacements: [fx.a.loopId], type: QueryTypes.SELECT });
    expect(Number(n[0]!.n)).toBe(2);
  });

  it("status changes are kept as an append-only history; closing needs a note; a new finding after closing opens a new item", async () => {
    const [row] = await db.sequelize.query<{ id: number }>("SELECT id FROM work_items WHERE loop_id = ? AND label = 'valve-stiction'", { replacements: [fx.a.loopId], type: QueryTypes.SELECT });
    const id = Number(row!.id);
    signInAs(ctxOf(fx.a, "engineer"));
    const taken = await itemRoute.PATCH(req("PATCH", { status: "in-work", ownerId: fx.a.users.engineer.id, note: "valve travel test booked" }), params("itemId", id));
    expect(taken.status).toBe(200);
    expect((await itemRoute.PATCH(req("PATCH", { status: "closed" }), params("itemId", id))).status).toBe(422);
    const closed = await itemRoute.PATCH(req("PATCH", { status: "closed", note: "positioner replaced" }), params("itemId", id));
    const body = (await closed.json()) as { item: { status: string; closedAt: string | null }; history: { kind: string; fromStatus: string | null; toStatus: string | null; note: string | null }[] };
    expect(body.item.status).toBe("closed");
    expect(body.item.closedAt).not.toBeNull();
    expect(body.history.map((h) => [h.kind, h.fromStatus, h.toStatus])).toEqual([
      ["opened", null, "open"],
      ["owner", null, null],
      ["status", "open", "in-work"],
      ["status", "in-work", "closed"],
    ]);
    expect(body.history.at(-1)!.note).toBe("positioner replaced");

    const again = await recordFinding(db.sequelize, input(fx.a, stiction, Date.UTC(2026, 11, 3)));
    expect(again.opened).not.toBeNull();
    expect(again.opened).not.toBe(id);
    // The old item cannot be reopened beside the new one.
    expect((await itemRoute.PATCH(req("PATCH", { status: "open", note: "again" }), params("itemId", id))).status).toBe(409);
    const events = await db.sequelize.query<{ n: number }>("SELECT COUNT(*) AS n FROM work_item_events WHERE work_item_id = ?", { replacements: [id], type: QueryTypes.SELECT });
    expect(Number(events[0]!.n)).toBe(4);
    // The history cannot be rewritten (migration 0130 triggers).
    await expect(db.sequelize.query("UPDATE work_item_events SET note = 'rewritten' WHERE work_item_id = ?", { replacements: [id] })).rejects.toThrow(/append-only/);
    await expect(db.sequelize.query("DELETE FROM work_item_events WHERE work_item_id = ?", { replacements: [id] })).rejects.toThrow(/append-only/);
  });

  it("engineers edit; viewers and operators read", async () => {
    const [row] = await db.sequelize.query<{ id: number }>("SELECT id FROM work_items WHERE loop_id = ? AND open_key = 'aggressive-tuning'", { replacements: [fx.a.loopId], type: QueryTypes.SELECT });
    const id = Number(row!.id);
    for (const role of ["viewer", "operator"] as const) {
      signInAs(ctxOf(fx.a, role));
      expect((await itemRoute.GET(req("GET"), params("itemId", id))).status).toBe(200);
      expect((await itemRoute.PATCH(req("PATCH", { status: "in-work" }), params("itemId", id))).status).toBe(403);
      expect((await rulesRoute.POST(req("POST", { name: "x", recipients: ["a@b.example"] }))).status).toBe(403);
    }
    for (const role of ["engineer", "admin"] as const) {
      signInAs(ctxOf(fx.a, role));
      expect((await itemRoute.PATCH(req("PATCH", { note: `seen by ${role}` }), params("itemId", id))).status).toBe(200);
    }
    signInAs(ctxOf(fx.a, "engineer"));
    // The owner must be a member of the tenant.
    expect((await itemRoute.PATCH(req("PATCH", { ownerId: fx.b.users.engineer.id }), params("itemId", id))).status).toBe(422);
  });

  it("tenant isolation: another tenant's item and loop are 404, its list does not show them", async () => {
    const [row] = await db.sequelize.query<{ id: number }>("SELECT id FROM work_items WHERE loop_id = ? LIMIT 1", { replacements: [fx.a.loopId], type: QueryTypes.SELECT });
    signInAs(ctxOf(fx.b, "admin"));
    expect((await itemRoute.GET(req("GET"), params("itemId", Number(row!.id)))).status).toBe(404);
    expect((await itemRoute.PATCH(req("PATCH", { note: "x" }), params("itemId", Number(row!.id)))).status).toBe(404);
    expect((await findingRoute.GET(req("GET"), params("loopId", fx.a.loopId))).status).toBe(404);
    const list = (await (await listRoute.GET(new Request("http://127.0.0.1/api/work-list?status=all"))).json()) as { items: unknown[] };
    expect(list.items).toEqual([]);
  });
});

describe("latest assessment stored, restored, and mailed to finding rules only", () => {
  it("the loop's finding survives a restart of the service; a new item mails the finding rule, not the alarm rule", async () => {
    await saveAssessment(db.sequelize, input(fx.b, aggressive, Date.UTC(2026, 11, 2, 9)));
    signInAs(ctxOf(fx.b, "viewer"));
    const r = (await (await findingRoute.GET(req("GET"), params("loopId", fx.b.loopId))).json()) as { finding: { label: string } | null; report: { diagnosis: { label: string } } | null };
    expect(r.finding?.label).toBe("aggressive-tuning");
    expect(r.report?.diagnosis.label).toBe("aggressive-tuning");

    signInAs(ctxOf(fx.b, "engineer"));
    expect((await rulesRoute.POST(req("POST", { name: "Loop engineers", recipients: ["loops@b.example"] }))).status).toBe(201);
    await db.models.NotificationRule.create({ tenantId: fx.b.id, areaId: null, name: "Operators", recipients: ["board@b.example"], escalationMinutes: null, repeatMinutes: null });
    const sent: { to: string[]; subject: string }[] = [];
    const mail = { name: "mail", send: async (m: { to: string[]; subject: string }) => (sent.push(m), { messageId: "x" }), health: () => ({ status: "ok" as const }), stop: async () => undefined };
    const ctx: ServerContext = { config: getConfig({ NODE_ENV: "test" }), io: null, bus: new Bus(), clock: systemClock, services: new Map([["mail", mail as never]]) };
    // what the pipeline attaches to the loop's tracker (LoopAssessment.routine)
    const routines = new Map<number, { label: string; at: number }>();
    const svc = await startLiveAssessment(ctx, { sequelize: db.sequelize, tickEveryMs: 60_000, onRoutine: (id, r) => routines.set(id, r) });
    try {
      expect(svc.finding(fx.b.loopId)?.label).toBe("aggressive-tuning"); // restored
      expect(routines.get(fx.b.loopId)).toMatchObject({ label: "aggressive-tuning", at: Date.UTC(2026, 11, 2, 9) }); // and handed to the tracker
      // Feed DEV recordings (sticking valve, aggressive tuning) as telemetry until one opens an item
      // (the first ones may read below the threshold on the service's one-hour window).
      const candidates = plan.filter((p) => p.label === "valve-stiction" || p.label === "aggressive-tuning").slice(0, 12);
      let opened: { label: string; confidence: number } | null = null;
      for (const c of candidates) {
        const rec = generateRecording("dev", c.index);
        await db.sequelize.query("UPDATE loops SET telemetry_period_s = ?, pv_lo = ?, pv_hi = ?, kind = ?, gain_kind = 'gain', gain_value = ?, ti_value = ?, ti_units = 's', td_value = 0, action = ?, mv_lo = 0, mv_hi = 100, mv_limit_lo = NULL, mv_limit_hi = NULL WHERE id = ?", {
          replacements: [rec.config.samplePeriodS, rec.config.pvLo, rec.config.pvHi, rec.config.kind, rec.config.controller.kp, rec.config.controller.ti, rec.config.controller.action, fx.b.loopId],
        });
        await svc.reloadLoop(fx.b.loopId);
        const t0 = Date.UTC(2026, 11, 2, 10);
        svc.push(fx.b.loopId, rec.samples.map((s) => ({ t: t0 + Math.round(s.t * 1000), sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode ?? "auto", ...(s.quality ? { quality: s.quality } : {}) })));
        const d = svc.assessor.assessNow(fx.b.loopId)!.report.diagnosis;
        expect(routines.get(fx.b.loopId)?.label).toBe(d.label);
        await svc.flush();
        if (opensWorkItem(d)) {
          opened = d;
          break;
        }
        expect(sent).toEqual([]);
      }
      expect(svc.stats().writeErrors).toBe(0);
      expect(opened).not.toBeNull();
      const items = await db.sequelize.query<{ label: string }>("SELECT label FROM work_items WHERE loop_id = ? AND status = 'open'", { replacements: [fx.b.loopId], type: QueryTypes.SELECT });
      expect(items.map((i) => i.label)).toEqual([opened!.label]);
      expect(sent.map((m) => m.to)).toEqual([["loops@b.example"]]);
      expect(sent[0]!.subject).toMatch(/^Work list: /);
      // Nothing of this reaches the alarm tables.
      const alarms = await db.sequelize.query<{ n: number }>("SELECT COUNT(*) AS n FROM alarms", { type: QueryTypes.SELECT });
      expect(Number(alarms[0]!.n)).toBe(0);
    } finally {
      await svc.stop();
    }
  });
});
