/** Shared pieces of the alarm tests: a fake clock, a server context, fixtures, loop states. */
import { assessPoles } from "@/lib/domain/assessment";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import type { Sequelize } from "sequelize";
import { afterAll, beforeAll } from "vitest";
import { getConfig } from "@/lib/config";
import type { LoopStateDto, PoleDto, Role, TenantContext } from "@/lib/domain/types";
import { AlarmService } from "@/server/alarms/service";
import { Bus, type Clock, type ServerContext } from "@/server/context";
import type { Models } from "@/models";
import { lateBound } from "../helpers/late-bound";
import { createTestDatabase, type TestDatabase } from "../setup/db";

export class FakeClock implements Clock {
  private timers: { id: number; at: number; fn: () => void; every: number | null }[] = [];
  private nextId = 1;
  constructor(public t: number) {}
  now(): number {
    return this.t;
  }
  setTimeout(fn: () => void, ms: number) {
    const id = this.nextId++;
    this.timers.push({ id, at: this.t + Math.max(0, ms), fn, every: null });
    return { cancel: () => void (this.timers = this.timers.filter((x) => x.id !== id)) };
  }
  setInterval(fn: () => void, ms: number) {
    const id = this.nextId++;
    this.timers.push({ id, at: this.t + ms, fn, every: ms });
    return { cancel: () => void (this.timers = this.timers.filter((x) => x.id !== id)) };
  }
  /** Move time forward, firing due timers in order (and letting promises settle between them). */
  async advance(ms: number): Promise<void> {
    const target = this.t + ms;
    for (;;) {
      const due = this.timers.filter((x) => x.at <= target).sort((a, b) => a.at - b.at || a.id - b.id)[0];
      if (!due) break;
      this.t = due.at;
      if (due.every) due.at += due.every;
      else this.timers = this.timers.filter((x) => x.id !== due.id);
      due.fn();
      await settle();
    }
    this.t = target;
    await settle();
  }
  get pending(): number {
    return this.timers.length;
  }
}

export async function settle(): Promise<void> {
  for (let i = 0; i < 5; i++) await new Promise((r) => setImmediate(r));
}

export function testContext(clock: Clock): ServerContext {
  return { config: getConfig({ NODE_ENV: "test" }), io: null, bus: new Bus(), clock, services: new Map() };
}

const journalDirs: string[] = [];
// Registered by every test file that imports these helpers: its journals go when it ends.
afterAll(() => {
  for (const d of journalDirs.splice(0)) fs.rmSync(d, { recursive: true, force: true });
});

/** A fresh journal path in its own temporary folder (removed when the test process exits). */
export function tempJournal(): string {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-aj-"));
  journalDirs.push(dir);
  return path.join(dir, "alarm-journal.ndjson");
}

/** An alarm service on the test database, registered in its context: a 1 MiB journal, a retry every 50 ms. */
export async function startAlarmService(sequelize: Sequelize, clock: Clock, journalPath: string, ctx = testContext(clock)): Promise<{ svc: AlarmService; ctx: ServerContext }> {
  const svc = await AlarmService.start(ctx, { sequelize, journalPath, journalMaxBytes: 1 << 20, retryMs: 50, quiet: true });
  ctx.services.set("alarms", svc);
  return { svc, ctx };
}

export interface Fixture {
  tenantId: number;
  otherTenantId: number;
  siteId: number;
  areaId: number;
  loopId: number;
  otherLoopId: number;
  users: Record<Role, TenantContext>;
  outsider: TenantContext;
}

/** Two invented tenants, one site and area each, a loop each, and a user per role in the first. */
export async function createFixture(models: Models, opts: { baselineTimeConstantS?: number | null; estimationPeriodS?: number } = {}): Promise<Fixture> {
  const { Tenant, Site, Area, User } = models;
  const t = await Tenant.create({ slug: "harrowgate-polymers", name: "Harrowgate Polymers" });
  const o = await Tenant.create({ slug: "quillon-water", name: "Quillon Water Board" });
  const site = await Site.create({ tenantId: t.id, slug: "north-works", name: "North Works" });
  const osite = await Site.create({ tenantId: o.id, slug: "east-filters", name: "East Filters" });
  const area = await Area.create({ tenantId: t.id, siteId: site.id, slug: "reactors", name: "Reactors" });
  // Raw INSERT: only the columns the alarm service reads matter here.
  const insertLoop = async (tenantId: number, siteId: number, areaId: number | null, tag: string) => {
    const T = opts.estimationPeriodS ?? 1;
    const [id] = (await Tenant.sequelize!.query(
      `INSERT INTO loops (tenant_id, site_id, area_id, tag, slug, kind, units, pv_lo, pv_hi, telemetry_period_s, controller_period_s,
        gain_value, ti_value, estimation_period_s, baseline_time_constant_s, created_at, updated_at)
       VALUES (?,?,?,?,?, 'flow', 'm3/h', 0, 100, ?, ?, 0.8, 12, ?, ?, UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))`,
      { replacements: [tenantId, siteId, areaId, tag, tag.toLowerCase(), T, T, T, opts.baselineTimeConstantS === undefined ? 20 : opts.baselineTimeConstantS] },
    )) as unknown as [number];
    return { id: Number(id) };
  };
  const loop = await insertLoop(t.id, site.id, area.id, "FIC-101");
  const oloop = await insertLoop(o.id, osite.id, null, "FIC-900");
  const users = {} as Record<Role, TenantContext>;
  for (const role of ["viewer", "operator", "engineer", "admin"] as const) {
    const u = await User.create({ email: `${role}@harrowgate.example`, name: `Demo ${role}`, passwordHash: null });
    users[role] = { userId: u.id, email: u.email, name: u.name, tenantId: t.id, tenantSlug: t.slug, tenantName: t.name, role };
  }
  const ou = await User.create({ email: "admin@quillon.example", name: "Other admin", passwordHash: null });
  const outsider: TenantContext = { userId: ou.id, email: ou.email, name: ou.name, tenantId: o.id, tenantSlug: o.slug, tenantName: o.name, role: "admin" };
  return { tenantId: t.id, otherTenantId: o.id, siteId: site.id, areaId: area.id, loopId: loop.id, otherLoopId: oloop.id, users, outsider };
}

export async function setTenantPolicy(sequelize: Sequelize, tenantId: number, settings: object): Promise<void> {
  await sequelize.query(
    "INSERT INTO alarm_policies (tenant_id, scope, scope_id, settings, created_at, updated_at) VALUES (?, 'tenant', ?, ?, UTC_TIMESTAMP(3), UTC_TIMESTAMP(3)) ON DUPLICATE KEY UPDATE settings = VALUES(settings)",
    { replacements: [tenantId, tenantId, JSON.stringify(settings)] },
  );
}

export function pole(re: number, im: number): PoleDto {
  return { re, im, radius: Math.hypot(re, im), sdRadius: null, cov: null };
}

/** A conjugate pair with per-cycle decay ratio d at angle θ (r = d^(θ/2π)) plus a fast real pole. */
export function polesWithDecay(d: number, theta = Math.PI / 4): PoleDto[] {
  const r = Math.pow(d, theta / (2 * Math.PI));
  return [pole(r * Math.cos(theta), r * Math.sin(theta)), pole(r * Math.cos(theta), -r * Math.sin(theta)), pole(0.2, 0)];
}

/** A tracker state with these model poles, its figures from the one assessment (lib/domain/assessment.ts). */
export function loopState(loopId: number, tenantId: number, at: number, poles: PoleDto[], over: Partial<LoopStateDto> = {}): LoopStateDto {
  const sr = poles.length ? Math.max(...poles.map((p) => p.radius)) : null;
  const figures = assessPoles(poles, over.estimationPeriodS ?? 1);
  return {
    loopId,
    tenantId,
    at,
    receivedAt: at,
    trackerState: "tracking",
    stateReason: null,
    estimationPeriodS: 1,
    samples: 5000,
    excitation: 1,
    fitPercent: 92,
    juryStable: sr == null ? null : sr < 1,
    gainHeadroom: null,
    forecast: null,
    modelPoles: poles,
    dataPoles: [],
    dataPolesKind: "disturbance-response",
    zeros: [],
    characteristic: null,
    delaySamples: null,
    last: null,
    ...figures,
    polesFrom: poles.length ? "model" : null,
    ...over,
  };
}

export interface AlarmDb {
  readonly db: TestDatabase;
  readonly fx: Fixture;
}

/**
 * Registers the hooks that create a test database `name` with the alarm fixture and the tenant
 * policy `policy` before the file's own hooks, and drop it after them.
 */
export function setUpAlarmDb(name: string, policy: object): AlarmDb {
  let db: TestDatabase | undefined;
  let fx: Fixture | undefined;
  beforeAll(async () => {
    db = await createTestDatabase(name);
    fx = await createFixture(db.models);
    await setTenantPolicy(db.sequelize, fx.tenantId, policy);
  });
  afterAll(async () => {
    await db?.drop();
  });
  return lateBound<AlarmDb>(`alarm test database ${name}`, () => ({ db, fx }));
}
