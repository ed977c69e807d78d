/**
 * A small invented fixture for the auth tests (independent of the demo seed): two tenants with
 * one site, one area and one loop each, a user for every role in each tenant, and one user who
 * belongs to both. Names and e-mails are made up for tests.
 */
import bcrypt from "bcryptjs";
import type { Models } from "@/models";
import { ROLES, type Role, type TenantContext } from "@/lib/domain/types";
import { testLoopRow } from "@/tests/helpers/loop-row";

export const FIXTURE_PASSWORD = "fixture-pass-7319";

export interface FixtureTenant {
  id: number;
  slug: string;
  name: string;
  siteId: number;
  loopId: number;
  /** e-mail per role */
  users: Record<Role, { id: number; email: string }>;
}

export interface AuthFixture {
  a: FixtureTenant;
  b: FixtureTenant;
  /** Member of A (engineer) and B (viewer). */
  both: { id: number; email: string };
}

async function makeTenant(m: Models, slug: string, name: string, hash: string): Promise<FixtureTenant> {
  const tenant = await m.Tenant.create({ slug, name });
  const site = await m.Site.create({ tenantId: tenant.id, slug: "north", name: `${name} North` });
  const area = await m.Area.create({ tenantId: tenant.id, siteId: site.id, slug: "utilities", name: "Utilities" });
  const loop = await m.Loop.create(
    testLoopRow({ tenantId: tenant.id, siteId: site.id, areaId: area.id }, {
      telemetryPeriodS: 0.5,
      controllerPeriodS: 0.5,
      gainValue: 0.8,
      tiValue: 6,
      estimationPeriodS: 0.5,
    }),
  );
  const users = {} as Record<Role, { id: number; email: string }>;
  for (const role of ROLES) {
    const email = `${role}@${slug}.example`;
    const u = await m.User.create({ email, name: `${role[0]!.toUpperCase()}${role.slice(1)} of ${name}`, passwordHash: hash });
    await m.Membership.create({ userId: u.id, tenantId: tenant.id, role });
    users[role] = { id: u.id, email };
  }
  return { id: tenant.id, slug, name, siteId: site.id, loopId: loop.id, users };
}

export async function createAuthFixture(m: Models): Promise<AuthFixture> {
  const hash = await bcrypt.hash(FIXTURE_PASSWORD, 4);
  const a = await makeTenant(m, "brackwater", "Brackwater Polymers", hash);
  const b = await makeTenant(m, "quillon", "Quillon Terminals", hash);
  const u = await m.User.create({ email: "both@shared.example", name: "Sam Both", passwordHash: hash });
  await m.Membership.create({ userId: u.id, tenantId: a.id, role: "engineer" });
  await m.Membership.create({ userId: u.id, tenantId: b.id, role: "viewer" });
  return { a, b, both: { id: u.id, email: "both@shared.example" } };
}

/** The tenant context of the fixture tenant's user in `role` (what the session guard would return). */
export function fixtureContext(t: FixtureTenant, role: Role, name: string): TenantContext {
  const u = t.users[role];
  return { userId: u.id, email: u.email, name, tenantId: t.id, tenantSlug: t.slug, tenantName: t.name, role };
}
