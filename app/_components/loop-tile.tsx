"use client";
/**
 * One loop on the wall: tag, description, tracker state, the routine-data finding (a word with its
 * own glyph, from the loop's assessment: `state.routine`), alarm marks, rim gauge, decay ratio
 * with a short trend, a small z-plane, and the data age (greyed and marked "stale" when old).
 * Fixed height so the wall can virtualise; memoised on the summary object (the store replaces
 * it only when the loop changes).
 */
import { useRouter } from "next/navigation";
import { memo, useSyncExternalStore, type MouseEvent } from "react";
import { NON_TRACKING } from "@/lib/domain/alarms/conditions";
import type { LiveLoopSummary, TrackerState } from "@/lib/domain/types";
import { gaugeLevels } from "@/lib/domain/assessment";
import { DEFAULT_POLICY } from "@/lib/domain/alarms/policy";
import { dataAge } from "@/lib/client/order";
import { fmt, fmtAge } from "@/lib/client/format";
import { SPARK_POINTS, type Spark } from "@/lib/client/loop-store";
import { findingPhrase } from "@/lib/domain/findings";
import { FindingMark } from "./finding-mark";
import { PriorityMark as PriorityMarkPlain } from "./priority-mark";
import { TileGauge, TileSparkline, ZPlaneMini } from "./tile-graphics";
import { TrackerStateBadge as TrackerStateBadgePlain } from "./tracker-state-badge";

// Memoised here: a live batch re-renders a tile, and these rarely change with it.
const TrackerStateBadge = memo(TrackerStateBadgePlain);
const PriorityMark = memo(PriorityMarkPlain);

export const TILE_HEIGHT = 176;


/**
 * One shared 1 s clock for the tiles' data-age text: only that text re-renders every second,
 * not the whole tile (a tile re-renders when its loop changes or its stale flag flips).
 */
const clockListeners = new Set<() => void>();
let clockNow = Date.now();
let clockTimer: ReturnType<typeof setInterval> | null = null;
function subscribeClock(fn: () => void): () => void {
  clockListeners.add(fn);
  if (!clockTimer)
    clockTimer = setInterval(() => {
      clockNow = Date.now();
      for (const l of clockListeners) l();
    }, 1000);
  return () => {
    clockListeners.delete(fn);
    if (clockListeners.size === 0 && clockTimer) {
      clearInterval(clockTimer);
      clockTimer = null;
    }
  };
}
const clockSnapshot = () => clockNow;

const TileAge = memo(function TileAge({ receivedAt, estimationPeriodS, trackerState, now }: { receivedAt: number | null; estimationPeriodS: number; trackerState: TrackerState | null; now: number }) {
  const tick = useSyncExternalStore(subscribeClock, clockSnapshot, () => now);
  const { ageS, stale } = dataAge(trackerState === null ? null : { receivedAt, estimationPeriodS, trackerState }, Math.max(now, tick));
  return (
    <>
      {stale ? <strong>stale · </strong> : null}
      {fmtAge(ageS)}
    </>
  );
});

/** Range of the recent radii in the ring, and whether any decay ratio was recorded (read in place). */
function sparkRange(sp: Spark | undefined): { min: number | null; max: number | null; anyDecay: boolean } {
  if (!sp) return { min: null, max: null, anyDecay: false };
  let min = Infinity;
  let max = -Infinity;
  let anyDecay = false;
  const n = Math.min(sp.n, SPARK_POINTS);
  for (let k = 0; k < n; k++) {
    const r = sp.radius[k]!;
    if (Number.isFinite(r)) {
      if (r < min) min = r;
      if (r > max) max = r;
    }
    if (!anyDecay && Number.isFinite(sp.decay[k]!)) anyDecay = true;
  }
  return { min: Number.isFinite(min) ? min : null, max: Number.isFinite(max) ? max : null, anyDecay };
}

function LoopTileInner({
  loop,
  spark,
  now,
  big = false,
  levels: dr = DEFAULT_POLICY.decayRatio,
}: {
  loop: LiveLoopSummary;
  spark?: Spark;
  now: number;
  big?: boolean;
  levels?: { low: number; high: number };
  /** False for a mounted tile off screen (virtualiser overscan): live updates of the same loop wait until it is on screen. */
  onScreen?: boolean;
}) {
  const st = loop.state;
  const { stale } = dataAge(st, now);
  // An estimate the tracker does not trust (learning, low excitation, manual, saturated, stale:
  // the states in which no stability alarm is raised) is drawn in the muted ink, never in the
  // alarm colour: a pole outside the circle from an untrusted model is not an abnormal state.
  const muted = stale || (st != null && NON_TRACKING.has(st.trackerState));
  const levels = st ? gaugeLevels(st, dr) : { warn: null, alarm: null };
  const recent = sparkRange(spark);
  const active = loop.alarms.filter((a) => a.state !== "normal");
  const worst = active.find((a) => a.priority === "urgent") ?? active.find((a) => a.priority === "high") ?? active[0];
  const border =
    worst && (worst.state === "unacknowledged" || worst.state === "acknowledged" || worst.state === "rtn-unacknowledged")
      ? worst.priority === "urgent"
        ? "border-urgent"
        : worst.priority === "high"
          ? "border-high"
          : "border-low"
      : "border-line";
  const router = useRouter();
  // A plain link (no per-tile prefetch or viewport observer); a plain left click navigates in the app.
  const go = (e: MouseEvent<HTMLAnchorElement>) => {
    if (e.defaultPrevented || e.button !== 0 || e.metaKey || e.ctrlKey || e.shiftKey || e.altKey) return;
    e.preventDefault();
    router.push(`/loops/${loop.id}`);
  };
  const routine = st?.routine ?? null;
  const suppressed = active.length > 0 && active.every((a) => a.state === "out-of-service" || a.state === "suppressed-by-design" || a.state === "shelved");
  return (
    <a
      href={`/loops/${loop.id}`}
      onClick={go}
      className={`flex h-full flex-col gap-1 overflow-hidden rounded-md border-2 ${border} bg-surface p-2 no-underline hover:bg-raised focus-visible:bg-raised ${suppressed ? "hatch-suppressed" : ""} ${stale ? "opacity-75" : ""}`}
      // each tile is its own layout and paint island: a live update re-lays-out and repaints one tile
      style={{ contain: "layout paint style" }}
      data-testid="loop-tile"
      data-loop-id={loop.id}
      data-tracker-state={st?.trackerState ?? "none"}
      aria-label={`${loop.tag}: ${loop.description}. ${st ? `radius ${fmt(st.spectralRadius)}, ${st.trackerState}` : "no estimate"}${stale ? ", stale data" : ""}${active.length ? `, ${active.length} alarm(s)` : ""}. Finding: ${routine ? findingPhrase(routine) : "not judged yet"}`}
    >
      <div className="flex items-baseline justify-between gap-2">
        <span className={`truncate font-mono font-semibold ${big ? "text-2xl" : "text-base"}`}>{loop.tag}</span>
        <TrackerStateBadge state={st?.trackerState ?? null} reason={st?.stateReason} />
      </div>
      <div className={`flex items-baseline justify-between gap-2 ${big ? "text-base" : "text-xs"}`}>
        <span className="min-w-0 truncate text-muted">{loop.description}</span>
        {/* engineering work, not an alarm: neutral ink, own glyph, never pulsing */}
        <span className="flex min-w-0 max-w-[70%] shrink-0 justify-end" data-testid="tile-finding">
          <FindingMark finding={routine} compact big={big} />
        </span>
      </div>
      <div className="flex min-h-0 flex-1 gap-2">
        <div className="flex min-w-0 flex-1 flex-col gap-1">
          <TileGauge radius={st?.spectralRadius ?? null} warn={levels.warn} alarm={levels.alarm} recentMin={recent.min} recentMax={recent.max} stale={muted} width={big ? 150 : 110} />
          <div className={`num font-mono ${big ? "text-xl" : "text-sm"} ${muted ? "text-suppressed" : ""}`} data-testid="tile-radius">
            ρ {fmt(st?.spectralRadius ?? null)} <span className="text-muted">DR {fmt(st?.decayRatio ?? null, 2)}</span>
          </div>
          <TileSparkline spark={spark} n={spark?.n ?? 0} which={recent.anyDecay ? "decay" : "radius"} lo={0} hi={1} width={big ? 150 : 110} height={22} level={dr.high} label={`${loop.tag} recent decay ratio`} />
          <div className="mt-auto flex h-5 items-center gap-x-2 overflow-hidden whitespace-nowrap text-xs">
            {/* one line: the worst alarm in words, the others as marks */}
            {worst && <PriorityMark priority={worst.priority} state={worst.state} size={big ? 20 : 14} showWord={false} />}
            {active
              .filter((a) => a !== worst)
              .slice(0, 3)
              .map((a) => (
                <PriorityMark key={a.id} priority={a.priority} state={a.state} size={big ? 18 : 13} showWord={false} showState={false} />
              ))}
          </div>
          <div className={`num text-xs ${stale ? "text-suppressed" : "text-muted"}`} data-testid="tile-age">
            <TileAge receivedAt={st?.receivedAt ?? null} estimationPeriodS={st?.estimationPeriodS ?? 1} trackerState={st?.trackerState ?? null} now={now} />
          </div>
        </div>
        {st && (
          <ZPlaneMini
            modelPoles={st.modelPoles}
            dataPoles={st.dataPoles}
            dataPolesKind={st.dataPolesKind}
            warnRadius={levels.warn}
            alarmRadius={levels.alarm}
            size={big ? 130 : 96}
            stale={muted}
          />
        )}
      </div>
    </a>
  );
}

type TileProps = Parameters<typeof LoopTileInner>[0];
/**
 * Re-renders when the loop object is replaced (the store does so on every update), the levels
 * or size change, or the data turn stale or fresh; a new second alone only moves the age text.
 * Off screen (onScreen false) a new state of the same loop waits; another loop in the slot
 * re-renders at once, and a tile coming on screen re-renders if its loop changed since it last
 * rendered (`a` is what it last rendered: a skipped update leaves the rendered props in place).
 */
export const LoopTile = memo(LoopTileInner, (a: TileProps, b: TileProps) => {
  if (a.loop.id !== b.loop.id || a.big !== b.big || a.levels !== b.levels || a.spark !== b.spark) return false;
  if (b.onScreen === false) return true;
  return a.loop === b.loop && (a.now === b.now || dataAge(a.loop.state, a.now).stale === dataAge(b.loop.state, b.now).stale);
});
