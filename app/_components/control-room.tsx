"use client";
/**
 * The wall on a desk: area summaries, the band of alarms that need a person (with acknowledge),
 * and every loop as a tile, worst first. Tiles off screen are not rendered (window
 * virtualisation, a fixed pool of recycled tile slots); live updates are coalesced to one render
 * per animation frame by the store.
 */
import { useWindowVirtualizer } from "@tanstack/react-virtual";
import Link from "next/link";
import { memo, type ReactElement, useDeferredValue, useLayoutEffect, useMemo, useRef, useState } from "react";
import type { AlarmDto, Role } from "@/lib/domain/types";
import { roleAtLeast } from "@/lib/domain/types";
import { useAlarms, type useLoops } from "@/lib/client/hooks";
import { ATTENTION_STATES } from "@/lib/client/order";
import type { LiveLoopSummary } from "@/lib/domain/types";
import { CONDITION_WORDS, fmtClock } from "@/lib/client/format";
import { AlarmActions } from "./alarm-actions";
import { AreaSummaries } from "./area-summary";
import { useWorstFirstLoops } from "./use-worst-first";
import { LoopTile, TILE_HEIGHT } from "./loop-tile";
import { PriorityMark } from "./priority-mark";

const TILE_MIN_WIDTH = 300;
const GAP = 8;

export function ControlRoom({ role }: { role: Role }) {
  const { store, error, isLoading, connected, sorted: loops, areas, levels, now } = useWorstFirstLoops();
  const [filter, setFilter] = useState("");
  const deferred = useDeferredValue(filter);
  const shown = useMemo(() => {
    const f = deferred.trim().toLowerCase();
    if (!f) return loops;
    return loops.filter((l) => l.tag.toLowerCase().includes(f) || l.description.toLowerCase().includes(f) || (l.area ?? "").toLowerCase().includes(f));
  }, [loops, deferred]);

  return (
    <div className="flex flex-col gap-3">
      <div className="flex flex-wrap items-center justify-between gap-2">
        <h1 className="text-xl font-semibold">Control room</h1>
        <div className="flex items-center gap-3 text-sm">
          <span className={connected ? "text-muted" : "text-high"} data-testid="live-status">
            {connected ? "● live" : "○ reconnecting…"}
          </span>
          <label className="flex items-center gap-1">
            <span className="sr-only">Filter loops</span>
            <input
              value={filter}
              onChange={(e) => setFilter(e.target.value)}
              placeholder="Filter by tag, text, area"
              className="w-56 rounded border border-line bg-surface px-2 py-1"
            />
          </label>
          <Link href="/wall" className="rounded border border-line px-2 py-1 hover:border-accent">
            Wall mode
          </Link>
        </div>
      </div>
      {error && (
        <p role="alert" className="text-urgent">
          Could not load loops: {error.message}
        </p>
      )}
      <AreaSummaries areas={areas} />
      <AlarmBand role={role} />
      {isLoading && loops.length === 0 ? (
        <p className="text-muted">Loading loops…</p>
      ) : loops.length === 0 ? (
        <p className="text-muted">No loops are configured for this tenant yet. An engineer can add one under Loops.</p>
      ) : (
        <>
          <p className="text-xs text-muted">
            {shown.length} of {loops.length} loops, worst first (alarm priority, then margin to the alarm level).
          </p>
          <TileGrid loops={shown} store={store} now={now} levels={levels} />
        </>
      )}
    </div>
  );
}

const OVERSCAN = 2;

function TileGrid({ loops, store, now, levels }: { loops: LiveLoopSummary[]; store: ReturnType<typeof useLoops>["store"]; now: number; levels: { low: number; high: number } }) {
  const parent = useRef<HTMLDivElement>(null);
  const [width, setWidth] = useState(1200);
  const [offset, setOffset] = useState(0);
  const [viewH, setViewH] = useState(1000);
  useLayoutEffect(() => {
    const el = parent.current;
    if (!el) return;
    const ro = new ResizeObserver(() => {
      setWidth(el.clientWidth);
      setOffset(el.getBoundingClientRect().top + window.scrollY);
      setViewH(window.innerHeight);
    });
    ro.observe(el);
    return () => ro.disconnect();
  }, []);
  const cols = Math.max(1, Math.floor((width + GAP) / (TILE_MIN_WIDTH + GAP)));
  const rows = Math.ceil(loops.length / cols);
  const rowH = TILE_HEIGHT + GAP;
  const v = useWindowVirtualizer({ count: rows, estimateSize: () => rowH, overscan: OVERSCAN, scrollMargin: offset, useFlushSync: false });
  const nowS = Math.floor(now / 1000) * 1000;
  // A fixed pool of tile slots, keyed by row modulo the pool's rows: a row scrolling in takes
  // the slots of the row that scrolled out, so React updates mounted tiles (text, canvases)
  // instead of creating and styling new ones (the bench trace showed mounting a row as the
  // largest cost of a scrolling frame). The order's re-sort likewise only updates contents.
  const poolRows = Math.ceil(viewH / rowH) + 2 * OVERSCAN + 1;
  const first = v.getVirtualItems()[0]?.index ?? 0;
  // Tiles in the overscan rows (mounted, not on screen) skip live updates of their loop (see
  // LoopTile): a batch re-renders only the tiles on screen. The grid re-renders as soon as a row
  // comes into view (the virtualiser's visible range changed), and that row then shows the
  // current summary; a slot that takes another loop always re-renders.
  const visFrom = v.range?.startIndex ?? 0;
  const visTo = v.range?.endIndex ?? rows;
  const colW = (width - GAP * (cols - 1)) / cols;
  const tiles: ReactElement[] = [];
  for (let r = first; r < Math.min(rows, first + poolRows); r++) {
    const y = r * rowH;
    const end = Math.min(loops.length, r * cols + cols);
    const onScreen = r >= visFrom && r <= visTo;
    for (let i = r * cols; i < end; i++) {
      const c = i - r * cols;
      const l = store.get(loops[i]!.id) ?? loops[i]!;
      tiles.push(
        <div
          key={(r % poolRows) * cols + c}
          style={{ position: "absolute", top: 0, left: 0, width: colW, height: TILE_HEIGHT, transform: `translate(${c * (colW + GAP)}px, ${y}px)`, contain: "strict" }}
        >
          <LoopTile loop={l} spark={store.spark(l.id)} now={nowS} levels={levels} onScreen={onScreen} />
        </div>,
      );
    }
  }
  return (
    <div ref={parent} style={{ height: v.getTotalSize(), position: "relative" }} data-testid="tile-grid">
      {tiles}
    </div>
  );
}

/**
 * Alarms that need a person, highest priority first, with the operator's actions. Memoised: a
 * live batch re-renders the page, not the band (it follows `alarm:changed` on its own).
 */
export const AlarmBand = memo(function AlarmBand({ role, big = false }: { role: Role; big?: boolean }) {
  const { alarms, mutate, error } = useAlarms("");
  // The alarm whose action dialog is open stays in the band (in its latest state) until the dialog
  // closes: its row, and the dialog with the operator's comment, must not vanish when the alarm
  // leaves the attention states meanwhile (the server then answers the action with its reason).
  const [pinnedId, setPinnedId] = useState<number | null>(null);
  const active = useMemo(
    () =>
      alarms
        .filter((a: AlarmDto) => ATTENTION_STATES.has(a.state) || a.id === pinnedId)
        .sort(
          (a, b) =>
            ["urgent", "high", "low"].indexOf(a.priority) - ["urgent", "high", "low"].indexOf(b.priority) ||
            (a.state === "acknowledged" ? 1 : 0) - (b.state === "acknowledged" ? 1 : 0) ||
            (b.activatedAt ?? "").localeCompare(a.activatedAt ?? ""),
        ),
    [alarms, pinnedId],
  );
  const mayAct = roleAtLeast(role, "operator");
  return (
    <section aria-label="Alarms needing attention" className="rounded-md border border-line bg-surface" data-testid="alarm-band">
      <h2 className={`border-b border-line px-3 py-1 font-semibold ${big ? "text-xl" : "text-sm"}`}>
        Alarms needing attention <span className="num text-muted">({active.length})</span>
      </h2>
      {error && <p className="px-3 py-2 text-sm text-urgent">Could not load alarms: {error.message}</p>}
      {active.length === 0 ? (
        <p className="px-3 py-2 text-sm text-muted">None. Every loop is inside its alarm levels.</p>
      ) : (
        <ul className={`divide-y divide-line overflow-y-auto ${big ? "max-h-[30vh]" : "max-h-56"}`}>
          {active.map((a) => (
            <li key={a.id} className={`flex flex-wrap items-center gap-x-3 gap-y-1 px-3 py-1.5 ${big ? "text-lg" : "text-sm"}`} data-testid="alarm-row">
              <PriorityMark priority={a.priority} state={a.state} shelvedUntil={a.shelvedUntil} size={big ? 24 : 18} />
              <Link href={`/loops/${a.loopId}`} className="font-mono font-semibold underline-offset-2 hover:underline">
                {a.loopTag}
              </Link>
              <span>{CONDITION_WORDS[a.condition] ?? a.condition}</span>
              <span className="min-w-0 flex-1 truncate text-muted">{a.message}</span>
              <span className="num text-muted">since {fmtClock(a.activatedAt)} UTC</span>
              {mayAct && !big && <AlarmActions alarm={a} onDone={mutate} onOpenChange={(open) => setPinnedId(open ? a.id : null)} compact />}
            </li>
          ))}
        </ul>
      )}
    </section>
  );
});
