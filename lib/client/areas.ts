/**
 * Per operator-area summary of the live loop list: loops, alarms by priority, stale count, and the
 * worst radius among loops whose estimate is trusted (tracking, data not stale): a learning or
 * poor-fit estimate may put a pole far outside the circle, and the tiles show it muted for that
 * reason; an area's headline figure must not carry it.
 */
import "client-only";
import type { AlarmPriority, LiveLoopSummary } from "@/lib/domain/types";
import { NON_TRACKING } from "@/lib/domain/alarms/conditions";
import { ATTENTION_STATES, dataAge } from "./order";

export interface AreaStats {
  name: string;
  loops: number;
  stale: number;
  byPriority: Record<AlarmPriority, number>;
  unacked: number;
  worstRadius: number | null;
}

/** One summary per site and area, the areas with urgent then high alarms first. */
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
    const stale = dataAge(l.state, now).stale;
    if (stale) a.stale++;
    for (const al of l.alarms) {
      if (!ATTENTION_STATES.has(al.state)) continue;
      a.byPriority[al.priority]++;
      if (al.state !== "acknowledged") a.unacked++;
    }
    const r = l.state && !stale && !NON_TRACKING.has(l.state.trackerState) ? l.state.spectralRadius : null;
    if (r != null && (a.worstRadius === null || r > a.worstRadius)) a.worstRadius = r;
  }
  return [...m.values()].sort((x, y) => y.byPriority.urgent - x.byPriority.urgent || y.byPriority.high - x.byPriority.high || x.name.localeCompare(y.name));
}

