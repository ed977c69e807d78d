/** Per operator-area summary: loops, alarms by priority (shape + number), stale count, worst radius. */
import type { AlarmPriority, LiveLoopSummary } from "@/lib/domain/types";
import { ATTENTION_STATES, dataAge } from "@/lib/client/order";
import { fmt } from "@/lib/client/format";
import { memo } from "react";
import { PriorityShape } from "./priority-mark";

export interface AreaStats {
  name: string;
  loops: number;
  stale: number;
  byPriority: Record<AlarmPriority, number>;
  unacked: number;
  worstRadius: number | null;
}

export function summariseAreas(loops: readonly LiveLoopSummary[], now: number): AreaStats[] {
  const m = new Map<string, AreaStats>();
  for (const l of loops) {
    const name = l.area ? `${l.siteName} · ${l.area}` : l.siteName;
    let a = m.get(name);
    if (!a) {
      a = { name, loops: 0, stale: 0, byPriority: { urgent: 0, high: 0, low: 0 }, unacked: 0, worstRadius: null };
      m.set(name, a);
    }
    a.loops++;
    if (dataAge(l.state, now).stale) a.stale++;
    for (const al of l.alarms) {
      if (!ATTENTION_STATES.has(al.state)) continue;
      a.byPriority[al.priority]++;
      if (al.state !== "acknowledged") a.unacked++;
    }
    const r = l.state?.spectralRadius;
    if (r != null && (a.worstRadius === null || r > a.worstRadius)) a.worstRadius = r;
  }
  return [...m.values()].sort((x, y) => y.byPriority.urgent - x.byPriority.urgent || y.byPriority.high - x.byPriority.high || x.name.localeCompare(y.name));
}

/** Memoised on the `areas` array (recomputed once a second or when loops or alarms change). */
export const AreaSummaries = memo(function AreaSummaries({ areas, big = false }: { areas: AreaStats[]; big?: boolean }) {
  if (areas.length === 0) return null;
  return (
    <ul className={`grid gap-2 ${big ? "grid-cols-[repeat(auto-fill,minmax(20rem,1fr))]" : "grid-cols-[repeat(auto-fill,minmax(15rem,1fr))]"}`} aria-label="Operator areas">
      {areas.map((a) => (
        <li key={a.name} className="rounded-md border border-line bg-surface px-3 py-2" data-testid="area-summary">
          <div className={`truncate font-semibold ${big ? "text-xl" : "text-sm"}`}>{a.name}</div>
          <div className={`num flex flex-wrap items-center gap-x-3 gap-y-1 ${big ? "text-lg" : "text-sm"}`}>
            <span className="text-muted">{a.loops} loops</span>
            {(["urgent", "high", "low"] as const).map((p) =>
              a.byPriority[p] ? (
                <span key={p} className="inline-flex items-center gap-1" title={`${a.byPriority[p]} ${p}-priority alarm(s)`}>
                  <PriorityShape priority={p} size={big ? 22 : 16} />
                  <span>
                    {a.byPriority[p]} {p}
                  </span>
                </span>
              ) : null,
            )}
            {a.byPriority.urgent + a.byPriority.high + a.byPriority.low === 0 && <span className="text-muted">no alarms</span>}
            {a.unacked > 0 && <span>{a.unacked} unacknowledged</span>}
            {a.stale > 0 && <span className="text-suppressed">{a.stale} stale</span>}
            <span className="font-mono text-muted">max ρ {fmt(a.worstRadius)}</span>
          </div>
        </li>
      ))}
    </ul>
  );
});
