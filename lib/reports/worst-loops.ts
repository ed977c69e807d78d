/**
 * The worst-loops report: a tenant's loops ranked by the stated score (lib/reports/score.ts) over a
 * period, from the daily summaries, with each loop's evidence and its trend against the previous
 * period of the same length. Filters: site, area, kind. Its SQL is in lib/data/reports.ts.
 */
import type { Sequelize } from "sequelize";
import { loadDaySummaries, openWorkItemsByLoop, reportLoops, type OpenWorkItem } from "@/lib/data/reports";
import { ValidationError } from "@/lib/domain/errors";
import { combineDays, scoreLoop, type DaySummary, type PeriodFigures, type ScoreTerm } from "./score";
import { utcDay } from "./summaries";

const DAY_MS = 86_400_000;

export interface WorstLoopsFilter {
  /** Epoch ms of UTC day starts; `to` exclusive. */
  from: number;
  to: number;
  siteId?: number;
  areaId?: number;
  kind?: string;
  /** Site scope of the caller (null/undefined: every site). */
  siteIds?: number[] | null;
}

export interface WorstLoopRow {
  rank: number;
  loopId: number;
  tag: string;
  description: string;
  site: string;
  area: string | null;
  kind: string;
  criticality: number;
  score: number;
  previousScore: number | null;
  terms: Record<ScoreTerm, number>;
  figures: PeriodFigures;
  evidence: string[];
  missing: ScoreTerm[];
  /** Work-list items of the loop still open or in work (now, not over the period). */
  workItems: Pick<OpenWorkItem, "label" | "status" | "owner">[];
}

export interface WorstLoopsReport {
  tenantName: string;
  from: number;
  to: number;
  filter: { siteId: number | null; areaId: number | null; kind: string | null; site: string | null; area: string | null };
  rows: WorstLoopRow[];
  /** Loops in the filter without any summary in the period (no data). */
  withoutData: number;
  generatedAt: number;
}

export async function buildWorstLoops(
  ctx: { tenantId: number; tenantName: string },
  f: WorstLoopsFilter,
  now: number = Date.now(),
  db?: Sequelize,
): Promise<WorstLoopsReport> {
  if (!(f.from < f.to) || f.from % DAY_MS !== 0 || f.to % DAY_MS !== 0) throw new ValidationError("The period must be whole UTC days, `from` before `to`.");
  if (f.to - f.from > 366 * DAY_MS) throw new ValidationError("The period may be at most 366 days.");
  const loops = await reportLoops(ctx.tenantId, { ...f, enabledOnly: true }, db);
  const ids = loops.map((l) => l.id);
  const len = f.to - f.from;
  const cur = await loadDaySummaries(ctx, utcDay(f.from), utcDay(f.to), ids, db);
  const prev = await loadDaySummaries(ctx, utcDay(f.from - len), utcDay(f.from), ids, db);
  const group = (rows: DaySummary[]) => {
    const m = new Map<number, DaySummary[]>();
    for (const r of rows) (m.get(r.loopId) ?? m.set(r.loopId, []).get(r.loopId)!).push(r);
    return m;
  };
  const curBy = group(cur);
  const prevBy = group(prev);
  const items = await openWorkItemsByLoop(ctx.tenantId, ids, db);
  let withoutData = 0;
  const rows: WorstLoopRow[] = [];
  for (const l of loops) {
    const id = l.id;
    const days = curBy.get(id);
    if (!days?.length) {
      withoutData++;
      continue;
    }
    const figures = combineDays(days);
    const s = scoreLoop(figures, l.kind, l.criticality);
    const p = prevBy.get(id);
    rows.push({
      rank: 0,
      loopId: id,
      tag: l.tag,
      description: l.description,
      site: l.site,
      area: l.area,
      kind: l.kind,
      criticality: l.criticality,
      score: s.score,
      previousScore: p?.length ? scoreLoop(combineDays(p), l.kind, l.criticality).score : null,
      terms: s.terms,
      figures,
      evidence: s.evidence,
      missing: s.missing,
      workItems: (items.get(id) ?? []).map((w) => ({ label: w.label, status: w.status, owner: w.owner })),
    });
  }
  rows.sort((a, b) => b.score - a.score || a.tag.localeCompare(b.tag) || a.loopId - b.loopId);
  rows.forEach((r, i) => (r.rank = i + 1));
  const site = f.siteId !== undefined ? (loops[0]?.site ?? null) : null;
  const area = f.areaId !== undefined ? (loops[0]?.area ?? null) : null;
  return {
    tenantName: ctx.tenantName,
    from: f.from,
    to: f.to,
    filter: { siteId: f.siteId ?? null, areaId: f.areaId ?? null, kind: f.kind ?? null, site, area },
    rows,
    withoutData,
    generatedAt: now,
  };
}
