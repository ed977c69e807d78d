/** Sites and their operator areas (admin creates; every role reads them for forms and filters). */
import "server-only";
import { UniqueConstraintError } from "sequelize";
import { z } from "zod";
import { text } from "@/lib/text-input";
import { getDb } from "@/lib/data/db/sequelize";
import { ConflictError, NotFoundError, ValidationError } from "@/lib/domain/errors";
import { slugify } from "@/lib/domain/slug";
import { assertSiteVisible, findOwned, findOwnedOrThrow, siteVisible } from "@/lib/data/tenancy";
import type { TenantContext } from "@/lib/domain/types";
import { inConfigTransaction, logConfigChange } from "./config-log";

/** A text field holding an IANA time zone the runtime knows (e.g. Europe/Berlin). */
export const ianaTimeZone = () =>
  text()
    .trim()
    .refine((tz) => {
      try {
        new Intl.DateTimeFormat("en", { timeZone: tz });
        return tz.length > 0;
      } catch {
        return false;
      }
    }, "Use an IANA time zone such as Europe/Berlin.");

export const siteSchema = z
  .object({
    name: text().trim().min(2, "Name the site.").max(120),
    timeZone: ianaTimeZone(),
    reason: text().trim().max(500).optional(),
  })
  .strict();
export const areaSchema = z.object({ name: text().trim().min(2, "Name the area.").max(120), reason: text().trim().max(500).optional() }).strict();

export interface SiteDto {
  id: number;
  slug: string;
  name: string;
  timeZone: string;
  areas: { id: number; slug: string; name: string }[];
}

/** One site of the caller's tenant and site scope (404 otherwise). */
export async function getSite(ctx: TenantContext, siteId: number): Promise<{ id: number; slug: string; name: string; timeZone: string }> {
  assertSiteVisible(ctx, siteId, "Site");
  const site = await findOwnedOrThrow(getDb().models.Site, ctx, siteId, "Site");
  return { id: site.id, slug: site.slug, name: site.name, timeZone: site.timeZone };
}

export async function listSites(ctx: TenantContext): Promise<SiteDto[]> {
  const { Site, Area } = getDb().models;
  const sites = await Site.findAll({ where: { tenantId: ctx.tenantId }, order: [["name", "ASC"]] });
  const areas = await Area.findAll({ where: { tenantId: ctx.tenantId }, order: [["name", "ASC"]] });
  return sites.filter((s) => siteVisible(ctx, s.id)).map((s) => ({
    id: s.id,
    slug: s.slug,
    name: s.name,
    timeZone: s.timeZone,
    areas: areas.filter((a) => a.siteId === s.id).map((a) => ({ id: a.id, slug: a.slug, name: a.name })),
  }));
}

export async function createSite(ctx: TenantContext, input: z.infer<typeof siteSchema>): Promise<SiteDto> {
  const { Site } = getDb().models;
  const slug = slugify(input.name);
  if (!slug) throw new ValidationError("name: the name must contain a letter or a digit.");
  try {
    const s = await inConfigTransaction(async (transaction) => {
      const created = await Site.create({ tenantId: ctx.tenantId, slug, name: input.name, timeZone: input.timeZone }, { transaction });
      await logConfigChange(ctx, { entity: "site", entityId: created.id, diff: { name: { from: null, to: input.name } }, reason: input.reason ?? null }, transaction);
      return created;
    });
    return { id: s.id, slug, name: s.name, timeZone: s.timeZone, areas: [] };
  } catch (e) {
    if (e instanceof UniqueConstraintError) throw new ConflictError(`A site named like "${input.name}" already exists.`);
    throw e;
  }
}

export async function createArea(ctx: TenantContext, siteId: number, input: z.infer<typeof areaSchema>): Promise<{ id: number; slug: string; name: string }> {
  const { Site, Area } = getDb().models;
  const site = await findOwned(Site, ctx, siteId);
  if (!site) throw new NotFoundError("Site");
  const slug = slugify(input.name);
  if (!slug) throw new ValidationError("name: the name must contain a letter or a digit.");
  try {
    const a = await inConfigTransaction(async (transaction) => {
      const created = await Area.create({ tenantId: ctx.tenantId, siteId, slug, name: input.name }, { transaction });
      await logConfigChange(ctx, { entity: "area", entityId: created.id, diff: { name: { from: null, to: input.name } }, reason: input.reason ?? null }, transaction);
      return created;
    });
    return { id: a.id, slug, name: a.name };
  } catch (e) {
    if (e instanceof UniqueConstraintError) throw new ConflictError(`An area named like "${input.name}" already exists at this site.`);
    throw e;
  }
}
