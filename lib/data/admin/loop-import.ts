/**
 * Loop inventory import and export (engineer and admin). The import runs in two steps on the same
 * sheet: a preview that reads every row, resolves sites and areas, applies the kind's defaults to
 * blank cells, checks each loop with the loop form's own schema and refuses duplicates (within the
 * sheet and against the tenant's loops), returning every issue with its line; and a commit that
 * does all of that again and then creates every loop and its change-log entry in one transaction —
 * all loops or none. The export writes the tenant's loops in the same format.
 */
import "server-only";
import { UniqueConstraintError } from "sequelize";
import { z } from "zod";
import { getDb } from "@/lib/data/db/sequelize";
import { ConflictError, ValidationError } from "@/lib/domain/errors";
import { getServerContext } from "@/lib/data/server-context";
import { slugify } from "@/lib/domain/slug";
import { text } from "@/lib/text-input";
import type { TenantContext } from "@/lib/domain/types";
import { diffOf, inConfigTransaction, logConfigChange } from "./config-log";
import { applyKindDefaults, type DefaultableField } from "@/lib/admin/inventory-defaults";
import { formatInventoryCsv, parseInventoryCsv, type InventoryIssue, type InventoryLoop } from "@/lib/admin/inventory-csv";
import { MAX_INVENTORY_BYTES } from "@/lib/admin/inventory-limits";
import { loopConfigSchema, loopFieldsSchema, type LoopFields } from "@/lib/admin/loop-schema";

export const importRequestSchema = z
  .object({
    csv: z.string().max(MAX_INVENTORY_BYTES, `The sheet is larger than ${MAX_INVENTORY_BYTES / 1024 / 1024} MiB.`),
    /** false: preview only (nothing is saved). */
    commit: z.boolean(),
    reason: text().trim().min(5, "Give a change reason (at least 5 characters).").max(1000).optional(),
    mocReference: text().trim().max(64).optional().nullable(),
  })
  .strict();
export type ImportRequest = z.infer<typeof importRequestSchema>;

export interface ImportPreviewRow {
  line: number;
  site: string;
  area: string | null;
  loop: LoopFields;
  /** Fields that took the kind's default because the sheet left them blank. */
  defaulted: DefaultableField[];
}
export interface ImportResult {
  ok: boolean;
  rows: ImportPreviewRow[];
  issues: InventoryIssue[];
  /** Ids of the created loops (commit only). */
  created?: number[];
}

const FIELD_TO_COLUMN: Record<string, string> = {
  siteId: "site", areaId: "area", pvLo: "pv_lo", pvHi: "pv_hi", mvLo: "mv_lo", mvHi: "mv_hi", mvUnits: "mv_units",
  gainKind: "gain_kind", gainValue: "gain", tiValue: "ti", tiUnits: "ti_units", tdValue: "td", tdUnits: "td_units",
  tfS: "derivative_filter_s", telemetryPeriodS: "telemetry_period_s", controllerPeriodS: "controller_period_s",
  estimationPeriodS: "estimation_period_s", baselineTimeConstantS: "baseline_time_constant_s",
};
const key = (s: string) => s.trim().toLowerCase();

/** Read and check a sheet against the tenant's sites, areas and loops; saves nothing. */
export async function previewInventoryImport(ctx: TenantContext, csv: string): Promise<ImportResult> {
  const { Site, Area, Loop } = getDb().models;
  const { rows, issues } = parseInventoryCsv(csv);
  const [sites, areas, loops] = await Promise.all([
    Site.findAll({ where: { tenantId: ctx.tenantId } }),
    Area.findAll({ where: { tenantId: ctx.tenantId } }),
    Loop.findAll({ where: { tenantId: ctx.tenantId }, attributes: ["siteId", "tag", "slug"] }),
  ]);
  const siteByKey = new Map<string, (typeof sites)[number]>();
  for (const s of sites) for (const k of [key(s.name), s.slug]) siteByKey.set(k, s);
  const taken = new Map<string, string>(); // "siteId/slug" -> where it is taken
  for (const l of loops) taken.set(`${l.siteId}/${l.slug}`, `the loop ${l.tag} that already exists at this site`);

  const out: ImportPreviewRow[] = [];
  for (const row of rows) {
    const site = siteByKey.get(key(row.site)) ?? siteByKey.get(slugify(row.site));
    if (!site) {
      issues.push({ line: row.line, column: "site", message: `no site "${row.site}" in this tenant.` });
      continue;
    }
    let areaId: number | null = null;
    if (row.area !== null) {
      const area = areas.find((a) => a.siteId === site.id && (key(a.name) === key(row.area!) || a.slug === slugify(row.area!)));
      if (!area) {
        issues.push({ line: row.line, column: "area", message: `no operator area "${row.area}" at ${site.name}.` });
        continue;
      }
      areaId = area.id;
    }
    const { fields, defaulted } = applyKindDefaults(row.kind, row.given);
    const candidate = { ...fields, siteId: site.id, areaId, tag: row.tag, kind: row.kind };
    const res = loopConfigSchema.safeParse(candidate);
    if (!res.success) {
      for (const i of res.error.issues) {
        const f = String(i.path[0] ?? "");
        const column = FIELD_TO_COLUMN[f] ?? (f || null);
        const note = defaulted.includes(f as DefaultableField) ? ` (the ${row.kind} default; give a value)` : "";
        issues.push({ line: row.line, column, message: i.message + note });
      }
      continue;
    }
    const slug = slugify(res.data.tag);
    if (!slug) {
      issues.push({ line: row.line, column: "tag", message: "the tag must contain a letter or a digit." });
      continue;
    }
    const seen = taken.get(`${site.id}/${slug}`);
    if (seen) {
      issues.push({ line: row.line, column: "tag", message: `${res.data.tag} at ${site.name} duplicates ${seen} (tags must differ in letters or digits).` });
      continue;
    }
    taken.set(`${site.id}/${slug}`, `line ${row.line} of this file`);
    out.push({ line: row.line, site: site.name, area: areaId === null ? null : row.area, loop: res.data, defaulted });
  }
  if (rows.length === 0 && issues.length === 0) issues.push({ line: 2, column: null, message: "The file has no loops under its header." });
  issues.sort((a, b) => a.line - b.line);
  return { ok: issues.length === 0, rows: out, issues };
}

/** Preview again and, when the whole sheet is clean, create every loop with its log entry in one transaction. */
export async function commitInventoryImport(ctx: TenantContext, input: { csv: string; reason?: string; mocReference?: string | null }): Promise<ImportResult> {
  if (!input.reason) throw new ValidationError("reason: give a change reason (at least 5 characters).");
  const preview = await previewInventoryImport(ctx, input.csv);
  if (!preview.ok) throw new ValidationError(`The sheet has ${preview.issues.length} problem(s); nothing was saved.`, { issues: preview.issues });
  const { Loop } = getDb().models;
  const reason = `Inventory import: ${input.reason}`;
  let created: number[];
  try {
    created = await inConfigTransaction(async (transaction) => {
      const ids: number[] = [];
      for (const r of preview.rows) {
        const f = r.loop;
        const row = await Loop.create(
          { ...f, tenantId: ctx.tenantId, slug: slugify(f.tag), derivativeAlpha: null, mvLimitLo: null, mvLimitHi: null, cascadeMasterLoopId: null, estimationProposedS: null },
          { transaction },
        );
        await logConfigChange(ctx, { entity: "loop", entityId: row.id, diff: diffOf({}, f as Record<string, unknown>), reason, mocReference: input.mocReference }, transaction);
        ids.push(row.id);
      }
      return ids;
    });
  } catch (e) {
    // Another writer took a tag between the preview and the commit: the transaction rolled back whole.
    if (e instanceof UniqueConstraintError) throw new ConflictError("A loop with one of these tags was created meanwhile; nothing was saved. Preview again.");
    throw e;
  }
  const bus = getServerContext()?.bus;
  for (const id of created) bus?.emit("loop:config-changed", id);
  return { ...preview, created };
}

/** The tenant's loops in the import format, ordered by site, then tag. */
export async function exportInventoryCsv(ctx: TenantContext): Promise<string> {
  const { Site, Area, Loop } = getDb().models;
  const [sites, areas, loops] = await Promise.all([
    Site.findAll({ where: { tenantId: ctx.tenantId } }),
    Area.findAll({ where: { tenantId: ctx.tenantId } }),
    Loop.findAll({ where: { tenantId: ctx.tenantId } }),
  ]);
  const siteName = new Map(sites.map((s) => [s.id, s.name]));
  const areaName = new Map(areas.map((a) => [a.id, a.name]));
  const fields = Object.keys(loopFieldsSchema.shape) as (keyof LoopFields)[];
  const out: InventoryLoop[] = loops.map((l) => {
    const plain = l.get({ plain: true }) as Record<string, unknown>;
    const rec: Record<string, unknown> = {};
    for (const k of fields) rec[k] = plain[k] ?? null;
    rec.tdValue = (plain.tdValue as number | null) ?? 0;
    rec.enabled = Boolean(plain.enabled);
    rec.site = siteName.get(l.siteId) ?? "";
    rec.area = l.areaId == null ? null : (areaName.get(l.areaId) ?? null);
    return rec as InventoryLoop;
  });
  out.sort((a, b) => a.site.localeCompare(b.site) || a.tag.localeCompare(b.tag));
  return formatInventoryCsv(out);
}
