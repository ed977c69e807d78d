/**
 * Which loop a topic names: (tenant slug, site slug, loop slug) -> loop id. Rebuilt from MariaDB at
 * start and whenever a loop changes; lookups are one Map access on the hot path.
 */
import type { QualityRange } from "@/lib/domain/sample-quality";
import type { TelemetryTopic } from "@/lib/domain/telemetry";

export interface LoopRoute {
  loopId: number;
  tenantId: number;
  siteId: number;
  tenantSlug: string;
  siteSlug: string;
  loopSlug: string;
  /** The loop's configured PV and MV ranges, for judging sample quality (absent: fault values only). */
  range?: QualityRange;
}

const key = (tenant: string, site: string, loop: string) => `${tenant}/${site}/${loop}`;

export class LoopDirectory {
  private byTopic = new Map<string, LoopRoute>();
  private byId = new Map<number, LoopRoute>();
  private tenants = new Map<string, number>();

  constructor(routes: LoopRoute[] = []) {
    this.replace(routes);
  }

  /** Swap the whole table at once (readers never see a half-built map). */
  replace(routes: LoopRoute[]): void {
    const byTopic = new Map<string, LoopRoute>();
    const byId = new Map<number, LoopRoute>();
    const tenants = new Map<string, number>();
    for (const r of routes) {
      byTopic.set(key(r.tenantSlug, r.siteSlug, r.loopSlug), r);
      byId.set(r.loopId, r);
      tenants.set(r.tenantSlug, r.tenantId);
    }
    this.byTopic = byTopic;
    this.byId = byId;
    this.tenants = tenants;
  }

  /** Add or replace one route (a tenant slug seen once stays known). */
  upsert(route: LoopRoute): void {
    const old = this.byId.get(route.loopId);
    if (old) this.byTopic.delete(key(old.tenantSlug, old.siteSlug, old.loopSlug));
    this.byTopic.set(key(route.tenantSlug, route.siteSlug, route.loopSlug), route);
    this.byId.set(route.loopId, route);
    this.tenants.set(route.tenantSlug, route.tenantId);
  }

  remove(loopId: number): void {
    const old = this.byId.get(loopId);
    if (!old) return;
    this.byId.delete(loopId);
    this.byTopic.delete(key(old.tenantSlug, old.siteSlug, old.loopSlug));
  }

  resolve(t: TelemetryTopic): LoopRoute | null {
    return this.byTopic.get(key(t.tenantSlug, t.siteSlug, t.loopSlug)) ?? null;
  }

  get(loopId: number): LoopRoute | null {
    return this.byId.get(loopId) ?? null;
  }

  tenantIdOf(tenantSlug: string): number | null {
    return this.tenants.get(tenantSlug) ?? null;
  }

  routes(): LoopRoute[] {
    return [...this.byId.values()];
  }

  get size(): number {
    return this.byId.size;
  }
}
