import { execFileSync } from "node:child_process";
import bcrypt from "bcryptjs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { policyOverrideSchema } from "@/lib/domain/alarms/policy";
import { c2dZoh, closedLoopPolynomial, discretePid, juryTest, polyRoots, type ContinuousTf } from "@/lib/control";
import { verifyDeviceSecret } from "@/lib/devices";
import {
  DEMO_ACCOUNTS,
  DEMO_DEVICES,
  DEMO_LOOPS,
  DEMO_PASSWORD,
  DEMO_PLANTS,
  DEMO_TENANTS,
  seedDemo,
  type DemoPlantModel,
} from "@/lib/data/seed";
import { isSlug } from "@/lib/domain/slug";
import { ROLES } from "@/lib/domain/types";
import { tuningSeconds } from "@/models";
import { createTestDatabase, type TestDatabase } from "@/tests/setup/db";
import { PYTHON } from "../helpers/python";

const PEPPER = "seed-test-pepper-0123456789";
let db: TestDatabase;
let first: Record<string, number>;

beforeAll(async () => {
  db = await createTestDatabase("seed");
  first = (await seedDemo(db.sequelize, { models: db.models, devicePepper: PEPPER })).created;
});
afterAll(async () => {
  await db?.drop();
});

async function tableCounts(): Promise<Record<string, number>> {
  const out: Record<string, number> = {};
  for (const t of ["tenants", "sites", "areas", "users", "memberships", "loops", "alarm_policies", "device_credentials", "notification_rules"]) {
    const [rows] = await db.sequelize.query(`SELECT COUNT(*) AS n FROM ${t}`);
    out[t] = Number((rows as { n: number }[])[0]?.n);
  }
  return out;
}

describe("the demo seed", () => {
  it("creates at least two tenants, each with two or more sites, operator areas and 12 or more loops", async () => {
    const { Tenant, Site, Area, Loop } = db.models;
    const tenants = await Tenant.findAll();
    expect(tenants.length).toBeGreaterThanOrEqual(2);
    for (const t of tenants) {
      const sites = await Site.findAll({ where: { tenantId: t.id } });
      expect(sites.length).toBeGreaterThanOrEqual(2);
      for (const s of sites) expect(await Area.count({ where: { siteId: s.id } })).toBeGreaterThanOrEqual(1);
      const loops = await Loop.findAll({ where: { tenantId: t.id } });
      expect(loops.length).toBeGreaterThanOrEqual(12);
      expect(new Set(loops.map((l) => l.kind))).toEqual(new Set(["flow", "level", "temperature", "pressure"]));
      for (const l of loops) expect(l.areaId).not.toBeNull();
    }
  });

  it("uses sample periods from 0.1 s to 5 s, in the usual band for each kind of loop (common practice)", async () => {
    const loops = await db.models.Loop.findAll();
    const periods = loops.map((l) => l.telemetryPeriodS);
    expect(Math.min(...periods)).toBe(0.1);
    expect(Math.max(...periods)).toBe(5);
    const band: Record<string, [number, number]> = { flow: [0.1, 0.5], pressure: [0.1, 0.2], level: [1, 1], temperature: [2, 5] };
    for (const l of loops) {
      const [lo, hi] = band[l.kind]!;
      expect(l.telemetryPeriodS, l.tag).toBeGreaterThanOrEqual(lo);
      expect(l.telemetryPeriodS, l.tag).toBeLessThanOrEqual(hi);
      expect(l.estimationPeriodS, l.tag).toBeGreaterThanOrEqual(l.telemetryPeriodS);
      expect(l.pvHi, l.tag).toBeGreaterThan(l.pvLo);
      expect(isSlug(l.slug), l.slug).toBe(true);
    }
  });

  it("gives every tenant a user of every role, and one user two tenants", async () => {
    const { Membership, User } = db.models;
    for (const t of await db.models.Tenant.findAll()) {
      const roles = (await Membership.findAll({ where: { tenantId: t.id } })).map((m) => m.role);
      for (const r of ROLES) expect(roles, `${t.slug} ${r}`).toContain(r);
    }
    const [multi] = await db.sequelize.query("SELECT user_id FROM memberships GROUP BY user_id HAVING COUNT(*) >= 2");
    expect((multi as unknown[]).length).toBeGreaterThanOrEqual(1);
    for (const u of await User.findAll()) expect(u.email).toMatch(/@[a-z0-9.-]+\.example$/);
  });

  it("lets every demo account sign in with the demo password (bcrypt)", async () => {
    for (const email of new Set(DEMO_ACCOUNTS.map((a) => a.email))) {
      const u = await db.models.User.scope("withPassword").findOne({ where: { email } });
      expect(u?.passwordHash, email).toMatch(/^\$2[aby]\$/);
      expect(await bcrypt.compare(DEMO_PASSWORD, u!.passwordHash!), email).toBe(true);
      expect(await bcrypt.compare("wrong-password", u!.passwordHash!)).toBe(false);
    }
  });

  it("stores device secrets hashed, verifiable with the pepper used", async () => {
    for (const d of DEMO_DEVICES) {
      const row = await db.models.DeviceCredential.findOne({ where: { keyId: d.keyId } });
      expect(row?.secretHash).not.toContain(d.secret);
      expect(verifyDeviceSecret(d.secret, row!.secretHash, PEPPER)).toBe(true);
      expect(row?.siteId).not.toBeNull();
    }
  });

  it("writes a tenant policy per tenant and overrides that lib/domain/alarms/policy accepts", async () => {
    const policies = await db.models.AlarmPolicy.findAll();
    expect(policies.filter((p) => p.scope === "tenant").length).toBe(DEMO_TENANTS.length);
    expect(policies.some((p) => p.scope === "site")).toBe(true);
    expect(policies.some((p) => p.scope === "loop")).toBe(true);
    for (const p of policies) expect(() => policyOverrideSchema.parse(p.settings)).not.toThrow();
  });

  it("is idempotent: a second run creates nothing and changes no counts", async () => {
    const before = await tableCounts();
    const again = await seedDemo(db.sequelize, { models: db.models, devicePepper: PEPPER });
    expect(Object.values(again.created).every((n) => n === 0)).toBe(true);
    expect(await tableCounts()).toEqual(before);
    expect(first.loops).toBe(DEMO_LOOPS.length);
  });
});

describe("demo data for the simulator", () => {
  it("has a plant for every loop, with unique tags, and the stored tuning equals the simulator's controller", () => {
    expect(new Set(DEMO_LOOPS.map((l) => l.tag)).size).toBe(DEMO_LOOPS.length);
    expect(Object.keys(DEMO_PLANTS).sort()).toEqual(DEMO_LOOPS.map((l) => l.tag).sort());
    for (const l of DEMO_LOOPS) {
      expect(tuningSeconds({ ...l, tfS: null })).toEqual(DEMO_PLANTS[l.tag]!.controller);
    }
  });

  it("tunes FIC-1101 by the SIMC PI rule (Skogestad 2003), computed by hand", () => {
    // K = 1.1, tau = 2.5 s, theta = 0.4 s, tau_c = 0.8 s: Kc = tau / (K (tau_c + theta)) = 2.5 / 1.32 = 1.894 -> 1.9;
    // Ti = min(tau, 4 (tau_c + theta)) = min(2.5, 4.8) = 2.5 s. The mill writes PB = 100 / 1.9 = 52.6 % and Ti in minutes.
    const l = DEMO_LOOPS.find((x) => x.tag === "FIC-1101")!;
    expect(l.gainKind).toBe("pb");
    expect(l.gainValue).toBeCloseTo(52.6, 6);
    expect(l.tiUnits).toBe("min");
    expect(l.tiValue! * 60).toBeCloseTo(2.5, 2);
  });

  it("has stable nominal closed loops at each controller period (lib/control, cross-checked with numpy.roots)", () => {
    const tf = (p: DemoPlantModel): ContinuousTf =>
      p.type === "first-order"
        ? { num: [p.gain], den: [p.timeConstantS, 1] }
        : p.type === "second-order"
          ? { num: [p.gain * p.naturalFrequency ** 2], den: [1, 2 * p.zeta * p.naturalFrequency, p.naturalFrequency ** 2] }
          : p.lagS > 0
            ? { num: [p.gain], den: [p.lagS, 1, 0] }
            : { num: [p.gain], den: [1, 0] };
    const polys: number[][] = [];
    const radii: number[] = [];
    for (const l of DEMO_LOOPS) {
      const { plant, controller: c } = DEMO_PLANTS[l.tag]!;
      const T = l.controllerPeriodS;
      const pid = discretePid({ kp: c.kp, ti: c.ti ?? undefined, td: c.td, tf: c.td > 0 ? c.tf : undefined, T, action: c.action, form: c.form });
      const poly = closedLoopPolynomial(c2dZoh(tf(plant), T, plant.deadTimeS), pid);
      const rho = Math.max(...polyRoots(poly).map((z) => Math.hypot(z.re, z.im)));
      expect(juryTest(poly).stable, l.tag).toBe(true);
      expect(rho, l.tag).toBeLessThan(1);
      polys.push(poly);
      radii.push(rho);
    }
    // numpy (Debian python3-numpy) computes the same spectral radii from the same polynomials.
    const script = "import json,sys,numpy as np\nprint(json.dumps([float(max(abs(np.roots(p)))) for p in json.load(sys.stdin)]))";
    const ref = JSON.parse(execFileSync(PYTHON, ["-c", script], { input: JSON.stringify(polys) }).toString()) as number[];
    ref.forEach((r, i) => expect(radii[i]!, DEMO_LOOPS[i]!.tag).toBeCloseTo(r, 6));
  });
});
