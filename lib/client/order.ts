/**
 * Worst-first ordering of loops (docs/visual-language.md, Principles, "Worst first"): by the highest priority of the loop's
 * alarms that need attention; then loops already past their own alarm level (unstable, or a decay
 * ratio over the level, still within the on-delay or untrusted); then loops whose routine-data
 * finding is engineering work (`findingRank`: the verdict the loop's assessment carries in
 * `state.routine` opens a work-list item — likely sticking valve, aggressive or sluggish tuning,
 * outside disturbance, saturation, sensor fault, manual — with confidence above 0.6); then the
 * margin to the loop's own alarm level, smallest first. A finding never outranks an alarm or a
 * loop past its level: it asks for an engineer's time, not an operator's response.
 * A raw radius is not comparable across sample periods, so the margin is measured on the
 * period-invariant decay ratio where the dominant mode oscillates, and on the rim distance
 * only where it does not. Pure functions: used by the wall, the inventory and the benchmark.
 */
import "client-only";
import { findingRank } from "@/lib/domain/findings";
import type { AlarmPriority, AlarmState, LoopStateBrief, LoopSummary } from "@/lib/domain/types";

/** What the order reads of a loop: a REST LoopSummary (full state) and a live one (summary) both fit. */
export type OrderedLoop = Pick<LoopSummary, "id" | "tag" | "alarms"> & { state: LoopStateBrief | null };

const PRIORITY_RANK: Record<AlarmPriority, number> = { urgent: 0, high: 1, low: 2 };
/** Alarm states that ask something of a person (normal, suppressed and out of service do not). */
export const ATTENTION_STATES: ReadonlySet<AlarmState> = new Set(["unacknowledged", "acknowledged", "rtn-unacknowledged"]);

/** Decay-ratio alarm level used when the loop's own policy is not known to the page. */
export const DEFAULT_DECAY_ALARM = 0.5;

export function worstPriority(loop: Pick<LoopSummary, "alarms">): AlarmPriority | null {
  let best: AlarmPriority | null = null;
  for (const a of loop.alarms) {
    if (!ATTENTION_STATES.has(a.state)) continue;
    if (best === null || PRIORITY_RANK[a.priority] < PRIORITY_RANK[best]) best = a.priority;
  }
  return best;
}

/**
 * Margin to the alarm level: negative when past it. Unstable loops come first (below -1),
 * oscillating loops by (level - decay ratio) in [-1, 1], non-oscillating ones after them by
 * rim distance (offset by 1), loops without an estimate last.
 */
export function marginToAlarm(state: Pick<LoopStateBrief, "spectralRadius" | "juryStable" | "decayRatio" | "rimDistance"> | null, decayAlarm = DEFAULT_DECAY_ALARM): number {
  if (!state || state.spectralRadius === null) return Number.POSITIVE_INFINITY;
  if (state.spectralRadius >= 1 || state.juryStable === false) return -1 - (state.spectralRadius - 1);
  if (state.decayRatio !== null) return decayAlarm - state.decayRatio;
  return 1 + (state.rimDistance ?? 1 - state.spectralRadius);
}

/** Past the alarm level (0), then an engineering finding (1), then the rest (2). */
function attentionKey(margin: number, state: Pick<LoopStateBrief, "routine"> | null): number {
  return margin < 0 ? 0 : 1 + findingRank(state?.routine);
}

export function compareWorstFirst(a: OrderedLoop, b: OrderedLoop, decayAlarm = DEFAULT_DECAY_ALARM): number {
  const pa = worstPriority(a);
  const pb = worstPriority(b);
  const ra = pa === null ? 3 : PRIORITY_RANK[pa];
  const rb = pb === null ? 3 : PRIORITY_RANK[pb];
  if (ra !== rb) return ra - rb;
  const ma = marginToAlarm(a.state, decayAlarm);
  const mb = marginToAlarm(b.state, decayAlarm);
  const ka = attentionKey(ma, a.state);
  const kb = attentionKey(mb, b.state);
  if (ka !== kb) return ka - kb;
  if (ma !== mb) return ma < mb ? -1 : 1;
  return a.tag.localeCompare(b.tag);
}

export function sortWorstFirst<L extends OrderedLoop>(loops: readonly L[], decayAlarm = DEFAULT_DECAY_ALARM): L[] {
  return [...loops].sort((a, b) => compareWorstFirst(a, b, decayAlarm));
}

/**
 * Worst-first order that does not jitter: alarm priority first (exact), then past the alarm level
 * or not, then the finding's rank (exact), then the margin to the alarm level in steps of `quantum`, and loops in the same step keep their previous relative
 * position (`prevRank`, loop id -> index of the last order), tag last. A loop moves only when
 * its margin crosses a step or its alarms change, so a wall refreshed every second does not
 * reshuffle on noise. Keys are computed once per loop (no priority/margin work inside the sort).
 */
export function stableWorstFirst<L extends OrderedLoop>(
  loops: readonly L[],
  prevRank: ReadonlyMap<number, number> | null,
  decayAlarm = DEFAULT_DECAY_ALARM,
  quantum = 0.02,
): L[] {
  const n = loops.length;
  const pr = new Float64Array(n);
  const fr = new Float64Array(n);
  const mq = new Float64Array(n);
  const rk = new Float64Array(n);
  const idx = new Array<number>(n);
  for (let i = 0; i < n; i++) {
    const l = loops[i]!;
    const p = worstPriority(l);
    pr[i] = p === null ? 3 : PRIORITY_RANK[p];
    const m = marginToAlarm(l.state, decayAlarm);
    fr[i] = attentionKey(m, l.state);
    mq[i] = Number.isFinite(m) ? Math.floor(m / quantum) : Number.POSITIVE_INFINITY;
    rk[i] = prevRank?.get(l.id) ?? Number.POSITIVE_INFINITY;
    idx[i] = i;
  }
  idx.sort((a, b) => {
    if (pr[a] !== pr[b]) return pr[a]! - pr[b]!;
    if (fr[a] !== fr[b]) return fr[a]! - fr[b]!;
    if (mq[a] !== mq[b]) return mq[a]! < mq[b]! ? -1 : 1;
    if (rk[a] !== rk[b]) return rk[a]! < rk[b]! ? -1 : 1;
    return loops[a]!.tag.localeCompare(loops[b]!.tag);
  });
  return idx.map((i) => loops[i]!);
}

/** Equivalent time constant of a real pole at radius r and period T: τ = -T / ln r (seconds). */
export function timeConstantOfRadius(r: number, T: number): number | null {
  if (!(r > 0 && r < 1) || !(T > 0)) return null;
  return -T / Math.log(r);
}

/** Age of the data in seconds; stale when older than `staleAfterS` (or 5 estimation periods, at least 15 s). */
export function dataAge(state: Pick<LoopStateBrief, "receivedAt" | "estimationPeriodS" | "trackerState"> | null, now: number): { ageS: number | null; stale: boolean } {
  if (!state || state.receivedAt === null) return { ageS: null, stale: true };
  const ageS = Math.max(0, (now - state.receivedAt) / 1000);
  const staleAfterS = Math.max(15, 5 * state.estimationPeriodS);
  return { ageS, stale: ageS > staleAfterS || state.trackerState === "stale" };
}

/** Holds the last order's places so each re-sort keeps loops of equal margin step where they were. */
export class WorstFirstOrder {
  private rank: Map<number, number> | null = null;

  sort<L extends OrderedLoop>(loops: readonly L[], decayAlarm = DEFAULT_DECAY_ALARM): L[] {
    const sorted = stableWorstFirst(loops, this.rank, decayAlarm);
    const m = new Map<number, number>();
    sorted.forEach((l, i) => m.set(l.id, i));
    this.rank = m;
    return sorted;
  }
}
