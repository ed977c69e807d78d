/**
 * Alarm-system performance figures over a time window, from the alarm occurrences (each
 * annunciated activation of an alarm point). Pure.
 *
 * Figures and their published guidance (values from memory of the documents; treat as guidance):
 * - Alarms per 10 minutes per operator position, average and peak: EEMUA 191 and ANSI/ISA-18.2
 *   (ISA-18.2 Table 5: about 1 per 10 min "very likely acceptable", 2 per 10 min "maximum manageable").
 *   Counted in fixed 10-minute intervals aligned on the start of the window (ISA-18.2 practice).
 * - Time in flood: an interval with more than 10 alarms in 10 minutes is a flood
 *   (ISA-18.2: flood begins at 10 or more per 10 min per operator; our contract says "more than 10");
 *   target under about 1 % of the time.
 * - Share of the ten most frequent alarms in the total load: ISA-18.2 target about 1-5 % maximum.
 * - Chattering alarms: 3 or more activations of one alarm point within 60 s (ISA-18.2 / EEMUA
 *   191 working definition); target zero.
 * - Stale alarms: active continuously for more than 24 h (ISA-18.2); target fewer than 5 on any day.
 * - Priority distribution against roughly 80 % low / 15 % high / 5 % urgent (EEMUA 191 and
 *   ISA-18.2 for three priorities).
 */
import type { AlarmPriority } from "@/lib/domain/types";

export interface OccurrenceRecord {
  alarmId: number;
  loopId: number;
  areaId: number | null;
  priority: AlarmPriority;
  /** Epoch ms. */
  startedAt: number;
  endedAt: number | null;
}

export const KPI_INTERVAL_MS = 10 * 60_000;
export const FLOOD_THRESHOLD = 10;
export const CHATTER_COUNT = 3;
export const CHATTER_WINDOW_MS = 60_000;
export const STALE_MS = 24 * 3600_000;
export const PRIORITY_TARGET: Record<AlarmPriority, number> = { low: 80, high: 15, urgent: 5 };

export interface AreaRate {
  areaId: number | null;
  alarms: number;
  averagePer10Min: number;
  peakPer10Min: number;
  floodIntervals: number;
  percentTimeInFlood: number;
}

export interface AlarmKpis {
  from: number;
  to: number;
  intervals: number;
  totalAlarms: number;
  areas: AreaRate[];
  /** All areas together (a single operator position would see this). */
  overall: AreaRate;
  topTen: { alarmId: number; loopId: number; count: number }[];
  topTenSharePercent: number;
  chattering: { alarmId: number; loopId: number; maxIn60s: number }[];
  stale: { alarmId: number; loopId: number; activeHours: number }[];
  priority: { priority: AlarmPriority; count: number; percent: number; targetPercent: number }[];
}

function rateOf(areaId: number | null, starts: number[], from: number, intervals: number): AreaRate {
  const buckets = new Array<number>(intervals).fill(0);
  for (const t of starts) {
    const i = Math.floor((t - from) / KPI_INTERVAL_MS);
    if (i >= 0 && i < intervals) buckets[i] = (buckets[i] ?? 0) + 1;
  }
  const flood = buckets.filter((n) => n > FLOOD_THRESHOLD).length;
  return {
    areaId,
    alarms: starts.length,
    averagePer10Min: intervals > 0 ? starts.length / intervals : 0,
    peakPer10Min: buckets.length ? Math.max(...buckets) : 0,
    floodIntervals: flood,
    percentTimeInFlood: intervals > 0 ? (100 * flood) / intervals : 0,
  };
}

/**
 * Compute the figures for occurrences that started in [from, to). The window is divided into
 * ceil((to - from) / 10 min) fixed intervals; the last may be partial and counts as one.
 * Stale alarms look at every occurrence still active at `to` (or that ended after > 24 h active
 * inside the window).
 */
export function computeAlarmKpis(occurrences: readonly OccurrenceRecord[], from: number, to: number): AlarmKpis {
  if (!(to > from)) throw new RangeError("KPI window: `to` must be after `from`.");
  const intervals = Math.ceil((to - from) / KPI_INTERVAL_MS);
  const inWindow = occurrences.filter((o) => o.startedAt >= from && o.startedAt < to);

  const byArea = new Map<number | null, number[]>();
  for (const o of inWindow) {
    const list = byArea.get(o.areaId) ?? [];
    list.push(o.startedAt);
    byArea.set(o.areaId, list);
  }
  const areas = [...byArea.entries()]
    .map(([areaId, starts]) => rateOf(areaId, starts, from, intervals))
    .sort((a, b) => (a.areaId ?? -1) - (b.areaId ?? -1));
  const overall = rateOf(null, inWindow.map((o) => o.startedAt), from, intervals);

  const perAlarm = new Map<number, { loopId: number; starts: number[] }>();
  for (const o of inWindow) {
    const e = perAlarm.get(o.alarmId) ?? { loopId: o.loopId, starts: [] };
    e.starts.push(o.startedAt);
    perAlarm.set(o.alarmId, e);
  }
  const ranked = [...perAlarm.entries()]
    .map(([alarmId, e]) => ({ alarmId, loopId: e.loopId, count: e.starts.length }))
    .sort((a, b) => b.count - a.count || a.alarmId - b.alarmId);
  const topTen = ranked.slice(0, 10);
  const topTenCount = topTen.reduce((s, r) => s + r.count, 0);

  const chattering: AlarmKpis["chattering"] = [];
  for (const [alarmId, e] of perAlarm) {
    const ts = [...e.starts].sort((a, b) => a - b);
    let maxIn = 0;
    let lo = 0;
    for (let hi = 0; hi < ts.length; hi++) {
      while ((ts[hi] as number) - (ts[lo] as number) >= CHATTER_WINDOW_MS) lo++;
      maxIn = Math.max(maxIn, hi - lo + 1);
    }
    if (maxIn >= CHATTER_COUNT) chattering.push({ alarmId, loopId: e.loopId, maxIn60s: maxIn });
  }
  chattering.sort((a, b) => b.maxIn60s - a.maxIn60s || a.alarmId - b.alarmId);

  const staleMap = new Map<number, { alarmId: number; loopId: number; activeHours: number }>();
  for (const o of occurrences) {
    if (o.startedAt >= to) continue;
    const end = o.endedAt ?? to;
    if (end < from && o.endedAt != null) continue;
    const activeMs = Math.min(end, to) - o.startedAt;
    if (activeMs > STALE_MS) {
      const prev = staleMap.get(o.alarmId);
      const hours = activeMs / 3600_000;
      if (!prev || prev.activeHours < hours) staleMap.set(o.alarmId, { alarmId: o.alarmId, loopId: o.loopId, activeHours: hours });
    }
  }

  const total = inWindow.length;
  const priority = (["low", "high", "urgent"] as const).map((p) => {
    const count = inWindow.filter((o) => o.priority === p).length;
    return { priority: p, count, percent: total ? (100 * count) / total : 0, targetPercent: PRIORITY_TARGET[p] };
  });

  return {
    from,
    to,
    intervals,
    totalAlarms: total,
    areas,
    overall,
    topTen,
    topTenSharePercent: total ? (100 * topTenCount) / total : 0,
    chattering,
    stale: [...staleMap.values()].sort((a, b) => b.activeHours - a.activeHours),
    priority,
  };
}
