/**
 * The tenancy guard. Every query for tenant-owned rows goes through here with the session's
 * TenantContext, so a row of another tenant is indistinguishable from a row that does not exist
 * (NotFoundError, 404). Keep it small: these few functions are the whole rule.
 *
 *   const loop = await findOwnedOrThrow(Loop, ctx, loopId, "Loop");
 *   const alarms = await scoped(ctx).findAll(Alarm, { where: { loopId: loop.id } });
 */
import { Op, type FindOptions, type Model, type ModelStatic, type WhereOptions } from "sequelize";
import { NotFoundError } from "@/lib/domain/errors";
import type { TenantContext } from "@/lib/domain/types";

/** The tenant of a context, as a where-clause fragment's value. */
type TenantOwned = Model & { tenantId: number };
type Ctx = Pick<TenantContext, "tenantId" | "siteIds">;

/**
 * Site scope: a membership may be limited to some sites (TenantContext.siteIds). A row of a site
 * outside the scope is, like another tenant's, indistinguishable from a missing one.
 */
export function siteVisible(ctx: Pick<TenantContext, "siteIds">, siteId: number | null | undefined): boolean {
  if (!ctx.siteIds) return true;
  return siteId != null && ctx.siteIds.includes(Number(siteId));
}

/** Throw NotFoundError(what) unless the context's site scope admits the site. */
export function assertSiteVisible(ctx: Pick<TenantContext, "siteIds">, siteId: number | null | undefined, what = "Resource"): void {
  if (!siteVisible(ctx, siteId)) throw new NotFoundError(what);
}

/** " AND <column> IN (?)" with its argument for a scoped context, or nothing. */
export function siteScopeSql(ctx: Pick<TenantContext, "siteIds">, column: string): { sql: string; args: unknown[] } {
  if (!ctx.siteIds) return { sql: "", args: [] };
  return { sql: ` AND ${column} IN (?)`, args: [ctx.siteIds.length ? ctx.siteIds : [0]] };
}

function tenantIdOf(ctx: Ctx): number {
  if (!ctx || !Number.isInteger(ctx.tenantId) || ctx.tenantId <= 0) {
    // A programming error, never a user's: refuse rather than run an unscoped query.
    throw new Error("Tenancy guard: a tenant context with a valid tenantId is required.");
  }
  return ctx.tenantId;
}

/** `where` restricted to the context's tenant (the tenant condition always wins). */
export function tenantWhere<M extends TenantOwned>(ctx: Ctx, where?: WhereOptions<M["_attributes"]>): WhereOptions<M["_attributes"]> {
  const tenant = { tenantId: tenantIdOf(ctx) } as unknown as WhereOptions<M["_attributes"]>;
  return where ? ({ [Op.and]: [where, tenant] } as unknown as WhereOptions<M["_attributes"]>) : tenant;
}

function scopedOptions<M extends TenantOwned>(ctx: Ctx, options?: FindOptions<M["_attributes"]>, model?: ModelStatic<M>): FindOptions<M["_attributes"]> {
  const where = tenantWhere<M>(ctx, options?.where);
  // Rows that belong to a site (loops, areas, ...) obey the site scope too.
  if (ctx.siteIds && model && "siteId" in model.getAttributes()) {
    const site = { siteId: { [Op.in]: ctx.siteIds } } as unknown as WhereOptions<M["_attributes"]>;
    return { ...options, where: { [Op.and]: [where, site] } as unknown as WhereOptions<M["_attributes"]> };
  }
  return { ...options, where };
}

/** The row with this primary key if it belongs to the context's tenant, else null. */
export async function findOwned<M extends TenantOwned>(
  model: ModelStatic<M>,
  ctx: Ctx,
  id: number | string,
  options?: Omit<FindOptions<M["_attributes"]>, "where">,
): Promise<M | null> {
  const pk = model.primaryKeyAttribute;
  if (id === null || id === undefined || (typeof id === "number" && !Number.isFinite(id))) return null;
  return model.findOne(scopedOptions<M>(ctx, { ...options, where: { [pk]: id } as WhereOptions<M["_attributes"]> }, model));
}

/** Like findOwned, but throws NotFoundError(what) when missing or owned by another tenant. */
export async function findOwnedOrThrow<M extends TenantOwned>(
  model: ModelStatic<M>,
  ctx: Ctx,
  id: number | string,
  what = model.name,
  options?: Omit<FindOptions<M["_attributes"]>, "where">,
): Promise<M> {
  const row = await findOwned(model, ctx, id, options);
  if (!row) throw new NotFoundError(what);
  return row;
}

/** Throw NotFoundError unless an already loaded row belongs to the context's tenant. */
export function assertOwned<T extends { tenantId: number }>(row: T | null | undefined, ctx: Ctx, what = "Resource"): T {
  if (!row || row.tenantId !== tenantIdOf(ctx)) throw new NotFoundError(what);
  return row;
}

/** Tenant-scoped finders bound to one context. */
export function scoped(ctx: Ctx) {
  tenantIdOf(ctx);
  return {
    tenantId: ctx.tenantId,
    where: <M extends TenantOwned>(where?: WhereOptions<M["_attributes"]>) => tenantWhere<M>(ctx, where),
    findOne: <M extends TenantOwned>(model: ModelStatic<M>, options?: FindOptions<M["_attributes"]>) =>
      model.findOne(scopedOptions<M>(ctx, options, model)),
    findAll: <M extends TenantOwned>(model: ModelStatic<M>, options?: FindOptions<M["_attributes"]>) =>
      model.findAll(scopedOptions<M>(ctx, options, model)),
    count: <M extends TenantOwned>(model: ModelStatic<M>, options?: Omit<FindOptions<M["_attributes"]>, "group">) =>
      model.count(scopedOptions<M>(ctx, options, model)),
    findById: <M extends TenantOwned>(model: ModelStatic<M>, id: number | string) => findOwned(model, ctx, id),
    findByIdOrThrow: <M extends TenantOwned>(model: ModelStatic<M>, id: number | string, what?: string) =>
      findOwnedOrThrow(model, ctx, id, what),
  };
}
