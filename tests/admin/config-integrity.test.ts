/**
 * Configuration changes and their audit trail (config_changes): a change and its log row commit
 * together or not at all, text must be well-formed Unicode (stored NFC), and loop fields must be
 * physically meaningful. Route handlers run against a real MariaDB with the session guard replaced
 * by a stand-in returning a chosen admin/engineer context (the guard has its own tests).
 */
import { QueryTypes } from "sequelize";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import type { TenantContext } from "@/lib/domain/types";
import { createAuthFixture, fixtureContext, type AuthFixture } from "../auth/fixture";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { signInAs } from "@/tests/helpers/guard-stand-in";
import { jsonRequest } from "@/tests/helpers/json-request";

vi.mock("@/lib/auth/guard", async () => (await import("@/tests/helpers/guard-stand-in")).guardStandIn({ checkRole: false }));

const rules = await import("@/app/api/admin/notification-rules/route");
const rule = await import("@/app/api/admin/notification-rules/[ruleId]/route");
const sites = await import("@/app/api/admin/sites/route");
const loops = await import("@/app/api/loops/route");
const loop = await import("@/app/api/loops/[loopId]/route");
const { createSite, createArea } = await import("@/lib/data/admin/sites");
const { createRule, updateRule, deleteRule } = await import("@/lib/data/admin/notifications");
const { createDevice, revokeDevice } = await import("@/lib/data/admin/devices");
const { inviteUser, changeRole, removeMember } = await import("@/lib/data/admin/users");
const { createLoop, updateLoop } = await import("@/lib/data/admin/loops");
const { writePolicy } = await import("@/lib/data/alarms/queries");
const { NEW_LOOP_DEFAULTS } = await import("@/lib/admin/loop-schema");

let db: TestDatabase;
let fx: AuthFixture;
let admin: TenantContext;
let ruleId: number;

const req = (method: string, body: unknown) => jsonRequest(method, "/api/x", body);
const ruleParams = (id: number) => ({ params: Promise.resolve({ ruleId: String(id) }) });
const loopParams = (id: number) => ({ params: Promise.resolve({ loopId: String(id) }) });

/** Every configuration table plus the change log, as plain rows: "changes nothing" means equal snapshots. */
const TABLES = [
  "notification_rules",
  "sites",
  "areas",
  "device_credentials",
  "invitations",
  "memberships",
  "loops",
  "alarm_policies",
  "config_changes",
];
async function snapshot(): Promise<Record<string, unknown[]>> {
  const out: Record<string, unknown[]> = {};
  for (const t of TABLES)
    out[t] = await db.sequelize.query(`SELECT * FROM \`${t}\` ORDER BY id`, {
      type: QueryTypes.SELECT,
    });
  return out;
}
const baseRule = {
  name: "Night shift utilities",
  areaId: null,
  recipients: ["shift.lead@brackwater.example"],
  minPriority: "high",
  escalationMinutes: null,
  repeatMinutes: null,
  enabled: true,
};

beforeAll(async () => {
  db = await createTestDatabase("cfgint", { asDefault: true });
  fx = await createAuthFixture(db.models);
  admin = fixtureContext(fx.a, "admin", "Admin");
  signInAs(admin);
  ruleId = (await createRule(admin, { ...baseRule, minPriority: "high", reason: "initial rule" }))
    .id;
});
afterAll(async () => {
  await db?.drop();
});

describe("text input: well-formed Unicode, NFC", () => {
  it("a lone surrogate in a notification rule's name is 422 and changes nothing (rule, recipients, log)", async () => {
    const before = await snapshot();
    // JSON can carry a lone high surrogate as an escape; JSON.stringify would turn a JS lone surrogate into the same escape.
    const body = `{"name":"Renamed \\ud800 rule","areaId":null,"recipients":["elsewhere@outside.example"],"minPriority":"high","escalationMinutes":null,"repeatMinutes":null,"enabled":true,"reason":"redirect mail"}`;
    const res = await rule.PUT(req("PUT", body), ruleParams(ruleId));
    expect(res.status).toBe(422);
    expect(((await res.json()) as { error: string }).error).toMatch(/name: .*well-formed Unicode/);
    expect(await snapshot()).toEqual(before);
  });

  it("a lone low surrogate in a reason or a recipient is 422 too (the shared helper covers every field)", async () => {
    const before = await snapshot();
    const lowInReason = `{"name":"Night shift utilities","areaId":null,"recipients":["shift.lead@brackwater.example"],"minPriority":"low","escalationMinutes":null,"repeatMinutes":null,"enabled":true,"reason":"why \\udc00 not"}`;
    expect((await rule.PUT(req("PUT", lowInReason), ruleParams(ruleId))).status).toBe(422);
    expect((await sites.POST(req("POST", `{"name":"Site \\udbff","timeZone":"UTC"}`))).status).toBe(
      422,
    );
    expect(
      (
        await loop.PATCH(
          req("PATCH", `{"description":"x\\ud83d","reason":"documenting"}`),
          loopParams(fx.a.loopId),
        )
      ).status,
    ).toBe(422);
    expect(await snapshot()).toEqual(before);
  });

  it("a well-formed pair (an emoji) is accepted and text is stored NFC-normalised", async () => {
    const decomposed = "Cafe\u0301 de\u0301part \u{1F525}"; // e + combining acute (NFD)
    const res = await rules.POST(
      req("POST", { ...baseRule, name: decomposed, reason: "new rule" }),
    );
    expect(res.status).toBe(201);
    const { rule: created } = (await res.json()) as { rule: { id: number; name: string } };
    expect(created.name).toBe("Caf\u00e9 d\u00e9part \u{1F525}");
    const [row] = await db.sequelize.query("SELECT name FROM notification_rules WHERE id = ?", {
      replacements: [created.id],
      type: QueryTypes.SELECT,
    });
    expect((row as { name: string }).name).toBe(decomposed.normalize("NFC"));
  });
});

describe("a change and its change-log row commit together or not at all", () => {
  // A trigger makes every insert into config_changes fail, as a log write failing for any reason would.
  const arm = () =>
    db.sequelize.query(
      "CREATE TRIGGER cfgint_fail_log BEFORE INSERT ON config_changes FOR EACH ROW SIGNAL SQLSTATE '45000' SET MESSAGE_TEXT = 'forced change-log failure'",
    );
  const disarm = () => db.sequelize.query("DROP TRIGGER IF EXISTS cfgint_fail_log");

  const kinds: { kind: string; run: () => Promise<unknown> }[] = [
    {
      kind: "notification rule create",
      run: () =>
        createRule(admin, {
          ...baseRule,
          minPriority: "high",
          name: "Another rule",
          reason: "added",
        }),
    },
    {
      kind: "notification rule update",
      run: () =>
        updateRule(admin, ruleId, {
          ...baseRule,
          minPriority: "high",
          recipients: ["elsewhere@outside.example"],
          reason: "moved",
        }),
    },
    { kind: "notification rule delete", run: () => deleteRule(admin, ruleId, "removed") },
    {
      kind: "site create",
      run: () => createSite(admin, { name: "South works", timeZone: "UTC", reason: "new site" }),
    },
    {
      kind: "area create",
      run: () => createArea(admin, fx.a.siteId, { name: "Boilers", reason: "new area" }),
    },
    {
      kind: "device create",
      run: () =>
        createDevice(admin, { name: "Gateway 7", siteId: fx.a.siteId, reason: "new gateway" }),
    },
    { kind: "device revoke", run: async () => revokeDevice(admin, await deviceId(), "retired") },
    {
      kind: "user invite",
      run: () =>
        inviteUser(admin, {
          email: "new.hire@brackwater.example",
          role: "operator",
          reason: "new hire",
        }),
    },
    {
      kind: "membership role change",
      run: async () =>
        changeRole(admin, await membershipId("viewer"), { role: "operator", reason: "promoted" }),
    },
    {
      kind: "membership removal",
      run: async () => removeMember(admin, await membershipId("operator"), "left the company"),
    },
    {
      kind: "loop create",
      run: () =>
        createLoop(
          { ...admin, role: "engineer" },
          { ...NEW_LOOP_DEFAULTS, siteId: fx.a.siteId, tag: "TIC-900", reason: "new loop" },
        ),
    },
    {
      kind: "loop update",
      run: () =>
        updateLoop({ ...admin, role: "engineer" }, fx.a.loopId, {
          gainValue: 1.7,
          reason: "retuned",
        }),
    },
    {
      kind: "alarm policy",
      run: () =>
        writePolicy(
          db.sequelize,
          admin,
          "tenant",
          fx.a.id,
          { decayRatio: { low: 0.3, high: 0.4 } },
          "tighter",
          null,
          [],
        ),
    },
  ];
  let devId: number | null = null;
  async function deviceId(): Promise<number> {
    devId ??= (
      await createDevice(admin, { name: "Gateway 1", siteId: fx.a.siteId, reason: "setup" })
    ).id;
    return devId;
  }
  async function membershipId(role: "viewer" | "operator"): Promise<number> {
    const m = await db.models.Membership.findOne({
      where: { tenantId: fx.a.id, userId: fx.a.users[role].id },
    });
    return m!.id;
  }

  it.each(kinds)("$kind: the log insert fails, so the change is rolled back", async ({ run }) => {
    await deviceId();
    await arm();
    try {
      const before = await snapshot();
      const err = await run().then(
        () => null,
        (e: unknown) => e as { parent?: Error },
      );
      expect(err?.parent?.message).toMatch(/forced change-log failure/);
      expect(await snapshot()).toEqual(before);
    } finally {
      await disarm();
    }
  });

  it.each(kinds)(
    "$kind: without the fault the change and exactly one log row are written",
    async ({ run }) => {
      const n0 = await db.models.ConfigChange.count();
      await run();
      expect(await db.models.ConfigChange.count()).toBe(n0 + 1);
    },
  );
});

describe("loop fields: physically meaningful ranges (common practice, see lib/admin/loop-schema.ts)", () => {
  const create = (patch: Record<string, unknown>) =>
    loops.POST(
      req("POST", {
        ...NEW_LOOP_DEFAULTS,
        siteId: fx.a.siteId,
        tag: "FIC-777",
        reason: "new loop",
        ...patch,
      }),
    );
  const bad: [string, Record<string, unknown>, string][] = [
    ["controller period 5e-324 s", { controllerPeriodS: 5e-324 }, "controllerPeriodS"],
    [
      "telemetry period 0.001 s",
      { telemetryPeriodS: 0.001, estimationPeriodS: 1 },
      "telemetryPeriodS",
    ],
    ["controller period 2 days", { controllerPeriodS: 172_800 }, "controllerPeriodS"],
    ["estimation period 5e-324 s", { estimationPeriodS: 5e-324 }, "estimationPeriodS"],
    ["gain 5e-324", { gainValue: 5e-324 }, "gainValue"],
    ["gain 1e5 %/%", { gainValue: 1e5 }, "gainValue"],
    ["proportional band 0.001 %", { gainKind: "pb", gainValue: 0.001 }, "gainValue"],
    ["integral time 5e-324 s", { tiValue: 5e-324 }, "tiValue"],
    ["integral time 2 days in min", { tiValue: 2880, tiUnits: "min" }, "tiValue"],
    ["integral 1e5 repeats per minute", { tiValue: 1e5, tiUnits: "repeats-per-min" }, "tiValue"],
    ["derivative time 5e-324 s", { tdValue: 5e-324 }, "tdValue"],
    ["derivative time negative", { tdValue: -1 }, "tdValue"],
    ["derivative filter 1e-9 s", { tfS: 1e-9 }, "tfS"],
    ["PV range low above high", { pvLo: 100, pvHi: 0 }, "pvHi"],
    ["PV span 5e-324", { pvLo: 0, pvHi: 5e-324 }, "pvHi"],
    ["PV range 1e300", { pvHi: 1e300 }, "pvHi"],
    ["MV range empty", { mvLo: 50, mvHi: 50 }, "mvHi"],
    ["baseline time constant 5e-324 s", { baselineTimeConstantS: 5e-324 }, "baselineTimeConstantS"],
    ["period as a string", { controllerPeriodS: "1" }, "controllerPeriodS"],
  ];

  it.each(bad)("create with %s is 422 naming the field", async (_what, patch, field) => {
    const before = await db.models.Loop.count();
    const res = await create(patch);
    expect(res.status).toBe(422);
    expect(((await res.json()) as { error: string }).error).toContain(`${field}:`);
    expect(await db.models.Loop.count()).toBe(before);
  });

  it.each(bad)(
    "edit with %s is 422 naming the field, the loop unchanged",
    async (_what, patch, field) => {
      const before = (await db.models.Loop.findByPk(fx.a.loopId))!.get({ plain: true });
      const res = await loop.PATCH(
        req("PATCH", { ...patch, reason: "bad edit attempt" }),
        loopParams(fx.a.loopId),
      );
      expect(res.status).toBe(422);
      expect(((await res.json()) as { error: string }).error).toContain(`${field}:`);
      expect((await db.models.Loop.findByPk(fx.a.loopId))!.get({ plain: true })).toEqual(before);
    },
  );

  it("a patch is checked against the stored fields it depends on (gain kind switched to a band of 1e5 %)", async () => {
    await loop.PATCH(
      req("PATCH", { gainValue: 2, reason: "set a gain of 2" }),
      loopParams(fx.a.loopId),
    );
    const res = await loop.PATCH(
      req("PATCH", { gainKind: "pb", gainValue: 1e6 + 1, reason: "band too wide" }),
      loopParams(fx.a.loopId),
    );
    expect(res.status).toBe(422);
    const res2 = await loop.PATCH(
      req("PATCH", { tiUnits: "repeats-per-min", reason: "Ti 6 read as 6 repeats/min is 10 s" }),
      loopParams(fx.a.loopId),
    );
    expect(res2.status).toBe(200);
  });

  it("plausible values at the edges are accepted (0.01 s period, Kc 1e-4 and 1e4, band 0.01 %)", async () => {
    for (const [i, patch] of [
      { controllerPeriodS: 0.01, telemetryPeriodS: 0.01, estimationPeriodS: 0.01 },
      { gainValue: 1e-4 },
      { gainValue: 1e4 },
      { gainKind: "pb", gainValue: 0.01 },
      { tdValue: 0.01, tfS: 0 },
    ].entries()) {
      const res = await create({ ...patch, tag: `FIC-80${i}` });
      expect(res.status, JSON.stringify(patch)).toBe(201);
    }
  });
});
