/**
 * `seedDemo(sequelize)`: writes the invented demo scenario of ./demo.ts. Idempotent: every row is
 * found by its natural key first and created only when missing, so running it again (or after a
 * partial run) changes nothing that exists; an engineer's later edits to demo loops are kept.
 */
import bcrypt from "bcryptjs";
import { QueryTypes, type Attributes, type CreationAttributes, type Model, type ModelStatic, type Sequelize, type Transaction, type WhereOptions } from "sequelize";
import { seedSparkplugDemo } from "@/lib/data/sparkplug";
import { policyOverrideSchema } from "@/lib/domain/alarms/policy";
import { simulatorSparkplugIds } from "@/lib/domain/sparkplug";
import { hashDeviceSecret } from "@/lib/devices";
import { initModels, type Models } from "@/models";
import {
  DEMO_ACCOUNTS,
  DEMO_DEVICES,
  DEMO_LOOPS,
  DEMO_PASSWORD,
  DEMO_POLICY_OVERRIDES,
  DEMO_TENANT_POLICY,
  DEMO_TENANTS,
} from "@/lib/seed/demo";

export * from "@/lib/seed/demo";

export interface SeedSummary {
  /** Rows created by this call, per table (0 everywhere on a second run). */
  created: Record<string, number>;
}

export interface SeedOptions {
  /** Models already bound to `sequelize` (default: initModels(sequelize)). */
  models?: Models;
  /** HMAC key for device secrets (default: config DEVICE_SECRET_PEPPER). */
  devicePepper?: string;
  /** bcrypt cost (default 10). */
  bcryptCost?: number;
}

export async function seedDemo(sequelize: Sequelize, opts: SeedOptions = {}): Promise<SeedSummary> {
  const m = opts.models ?? initModels(sequelize);
  const created: Record<string, number> = {};
  const count = (table: string, wasCreated: boolean) => {
    created[table] = (created[table] ?? 0) + (wasCreated ? 1 : 0);
  };
  let passwordHash: string | null = null;
  const demoHash = async () => (passwordHash ??= await bcrypt.hash(DEMO_PASSWORD, opts.bcryptCost ?? 10));

  await sequelize.transaction(async (transaction: Transaction) => {
    const t = { transaction };
    /** The row found by its natural key `where`, else created from `defaults` (counted per table). */
    const ensure = async <M extends Model>(table: string, model: ModelStatic<M>, where: WhereOptions<Attributes<M>>, defaults: CreationAttributes<M>): Promise<M> => {
      const [row, wasCreated] = await model.findOrCreate({ where, defaults, transaction });
      count(table, wasCreated);
      return row;
    };
    const tenantIds = new Map<string, number>();
    const siteIds = new Map<string, number>();
    const areaIds = new Map<string, number>();
    const userIds = new Map<string, number>();

    for (const tenant of DEMO_TENANTS) {
      const row = await ensure("tenants", m.Tenant, { slug: tenant.slug }, { slug: tenant.slug, name: tenant.name });
      tenantIds.set(tenant.slug, row.id);
      for (const site of tenant.sites) {
        const s = await ensure("sites", m.Site, { tenantId: row.id, slug: site.slug }, { tenantId: row.id, slug: site.slug, name: site.name, timeZone: site.timeZone });
        siteIds.set(`${tenant.slug}/${site.slug}`, s.id);
        for (const area of site.areas) {
          const a = await ensure("areas", m.Area, { siteId: s.id, slug: area.slug }, { tenantId: row.id, siteId: s.id, slug: area.slug, name: area.name });
          areaIds.set(`${tenant.slug}/${site.slug}/${area.slug}`, a.id);
        }
      }
    }

    for (const acc of DEMO_ACCOUNTS) {
      let userId = userIds.get(acc.email);
      if (userId === undefined) {
        const existing = await m.User.findOne({ where: { email: acc.email }, ...t });
        if (existing) {
          userId = existing.id;
        } else {
          const u = await m.User.create({ email: acc.email, name: acc.name, passwordHash: await demoHash() }, t);
          userId = u.id;
        }
        count("users", !existing);
        userIds.set(acc.email, userId);
      }
      const tenantId = must(tenantIds.get(acc.tenant), `tenant ${acc.tenant}`);
      await ensure("memberships", m.Membership, { userId, tenantId }, { userId, tenantId, role: acc.role });
    }

    const loopIds = new Map<string, number>();
    for (const l of DEMO_LOOPS) {
      const tenantId = must(tenantIds.get(l.tenant), `tenant ${l.tenant}`);
      const siteId = must(siteIds.get(`${l.tenant}/${l.site}`), `site ${l.site}`);
      const areaId = must(areaIds.get(`${l.tenant}/${l.site}/${l.area}`), `area ${l.area}`);
      const { tenant: _t, site: _s, area: _a, ...fields } = l;
      const row = await ensure("loops", m.Loop, { tenantId, siteId, slug: l.slug }, { ...fields, tenantId, siteId, areaId, mvLimitLo: null, mvLimitHi: null, tfS: null, cascadeMasterLoopId: null });
      loopIds.set(l.tag, row.id);
    }

    for (const tenant of DEMO_TENANTS) {
      const tenantId = must(tenantIds.get(tenant.slug), tenant.slug);
      const where = { tenantId, scope: "tenant", scopeId: tenantId } as const;
      await ensure("alarm_policies", m.AlarmPolicy, where, { ...where, settings: policyOverrideSchema.parse(DEMO_TENANT_POLICY), updatedBy: null });
    }
    for (const o of DEMO_POLICY_OVERRIDES) {
      const tenantId = must(tenantIds.get(o.tenant), o.tenant);
      const scope = o.tag ? "loop" : "site";
      const scopeId = o.tag ? must(loopIds.get(o.tag), o.tag) : must(siteIds.get(`${o.tenant}/${o.site}`), o.site);
      await ensure("alarm_policies", m.AlarmPolicy, { tenantId, scope, scopeId }, { tenantId, scope, scopeId, settings: policyOverrideSchema.parse(o.settings), updatedBy: null });
    }

    for (const d of DEMO_DEVICES) {
      const tenantId = must(tenantIds.get(d.tenantSlug), d.tenantSlug);
      const siteId = must(siteIds.get(`${d.tenantSlug}/${d.siteSlug}`), d.siteSlug);
      await ensure("device_credentials", m.DeviceCredential, { keyId: d.keyId }, {
        tenantId,
        siteId,
        name: d.name,
        clientId: d.clientId,
        keyId: d.keyId,
        secretHash: hashDeviceSecret(d.secret, opts.devicePepper),
        createdBy: null,
      });
    }

    // the simulators' Sparkplug mode feeds the same loops (simulators/sparkplug-publisher.ts)
    await seedSparkplugDemo(
      sequelize,
      t.transaction,
      DEMO_TENANTS.map((x) => ({ tenantId: must(tenantIds.get(x.slug), x.slug), groupId: x.slug })),
      DEMO_LOOPS.map((l) => ({ tenantId: must(tenantIds.get(l.tenant), l.tenant), loopId: must(loopIds.get(l.tag), l.tag), ...simulatorSparkplugIds(l.tenant, l.site, l.slug) })),
    );

    for (const tenant of DEMO_TENANTS) {
      const tenantId = must(tenantIds.get(tenant.slug), tenant.slug);
      const people = DEMO_ACCOUNTS.filter((a) => a.tenant === tenant.slug && (a.role === "operator" || a.role === "engineer"));
      const name = "Shift team: urgent and high alarms";
      await ensure("notification_rules", m.NotificationRule, { tenantId, name }, {
        tenantId,
        areaId: null,
        name,
        recipients: people.map((p) => p.email),
        minPriority: "high",
        escalationMinutes: 15,
        repeatMinutes: 60,
      });
    }

    // Report e-mails of the demo, so the outbox shows scheduled delivery: the operator gets each
    // site's handover after every shift, the engineer the worst loops weekly, the admin fleet health.
    for (const acc of DEMO_ACCOUNTS) {
      const tenantId = must(tenantIds.get(acc.tenant), acc.tenant);
      const userId = must(userIds.get(acc.email), acc.email);
      const wanted: [string, string, number | null][] =
        acc.role === "operator"
          ? [...siteIds.entries()].filter(([k]) => k.startsWith(`${acc.tenant}/`)).map(([, id]) => ["handover", "shift", id])
          : acc.role === "engineer"
            ? [["worst-loops", "weekly", null]]
            : acc.role === "admin"
              ? [["fleet-health", "weekly", null]]
              : [];
      for (const [report, cadence, siteId] of wanted) {
        const found = await sequelize.query("SELECT id FROM report_subscriptions WHERE tenant_id = ? AND user_id = ? AND report = ? AND site_id <=> ?", {
          replacements: [tenantId, userId, report, siteId],
          type: QueryTypes.SELECT,
          ...t,
        });
        if (!found.length) {
          await sequelize.query("INSERT INTO report_subscriptions (tenant_id, user_id, report, cadence, site_id) VALUES (?,?,?,?,?)", { replacements: [tenantId, userId, report, cadence, siteId], ...t });
        }
        count("report_subscriptions", !found.length);
      }
    }
  });
  return { created };
}

function must<T>(v: T | undefined, what: string): T {
  if (v === undefined) throw new Error(`Demo seed: ${what} missing (inconsistent demo data).`);
  return v;
}
