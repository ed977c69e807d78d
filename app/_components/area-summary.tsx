/** Per operator-area summary: loops, alarms by priority (shape + number), stale count, worst radius. */
import type { AreaStats } from "@/lib/client/areas";
import { fmt } from "@/lib/client/format";
import { memo } from "react";
import { PriorityShape } from "./priority-mark";

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
