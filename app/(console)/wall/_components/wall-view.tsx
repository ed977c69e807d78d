"use client";
/**
 * Full-screen wall (docs/visual-language.md "The wall"): readable from three metres, no mouse needed. Area
 * summaries and the worst loops stay on screen; the rest pages on a timer with a visible page
 * indicator, so nothing hides below the fold. Keys: ← → change page, space pauses, Esc leaves.
 */
import Link from "next/link";
import { useEffect, useState } from "react";
import type { LiveLoopSummary, Role } from "@/lib/domain/types";
import { marginToAlarm, worstPriority } from "@/lib/client/order";
import { DEFAULT_POLICY } from "@/lib/domain/alarms/policy";
import { AreaSummaries } from "@/app/_components/area-summary";
import { useWorstFirstLoops } from "@/app/_components/use-worst-first";
import { AlarmBand } from "@/app/_components/control-room";
import { LoopTile } from "@/app/_components/loop-tile";

const PAGE_SECONDS = 12;
const TILE_W = 380;
const TILE_H = 212;

function useViewport(): { w: number; h: number } {
  const [vp, setVp] = useState({ w: 1920, h: 1080 });
  useEffect(() => {
    const on = () => setVp({ w: window.innerWidth, h: window.innerHeight });
    on();
    window.addEventListener("resize", on);
    return () => window.removeEventListener("resize", on);
  }, []);
  return vp;
}

/** Loops that stay on every page: any alarm needing a person, or past the alarm level. */
export function pinnedLoops<L extends LiveLoopSummary>(sorted: readonly L[], max: number, decayAlarm = DEFAULT_POLICY.decayRatio.high): L[] {
  return sorted.filter((l) => worstPriority(l) !== null || marginToAlarm(l.state, decayAlarm) < 0).slice(0, max);
}

export function WallView({ role, caution }: { role: Role; caution: string }) {
  const { store, connected, sorted, areas, levels, now } = useWorstFirstLoops();
  const { w, h } = useViewport();
  const cols = Math.max(1, Math.floor((w - 32) / (TILE_W + 12)));
  const reserved = 300; // header, area summaries and alarm band
  const rowsFit = Math.max(1, Math.floor((h - reserved) / (TILE_H + 12)));
  const pinned = pinnedLoops(sorted, cols, levels.high); // one row at most stays put
  const pinnedIds = new Set(pinned.map((l) => l.id));
  const rest = sorted.filter((l) => !pinnedIds.has(l.id));
  const perPage = Math.max(1, (rowsFit - (pinned.length ? 1 : 0)) * cols);
  const pages = Math.max(1, Math.ceil(rest.length / perPage));
  const [page, setPage] = useState(0);
  const [paused, setPaused] = useState(false);
  const current = Math.min(page, pages - 1);
  useEffect(() => {
    if (paused || pages <= 1) return;
    const id = setInterval(() => setPage((p) => (p + 1) % pages), PAGE_SECONDS * 1000);
    return () => clearInterval(id);
  }, [paused, pages]);
  useEffect(() => {
    const on = (e: KeyboardEvent) => {
      if (e.key === "ArrowRight") setPage((p) => (p + 1) % pages);
      else if (e.key === "ArrowLeft") setPage((p) => (p - 1 + pages) % pages);
      else if (e.key === " ") {
        e.preventDefault();
        setPaused((x) => !x);
      } else if (e.key === "f") void document.documentElement.requestFullscreen?.().catch(() => undefined);
    };
    window.addEventListener("keydown", on);
    return () => window.removeEventListener("keydown", on);
  }, [pages]);
  const pageLoops = rest.slice(current * perPage, current * perPage + perPage);
  const nowS = Math.floor(now / 1000) * 1000;
  const clock = new Date(now).toISOString().slice(11, 19);

  return (
    <div data-theme="dark" className="fixed inset-0 z-50 flex flex-col gap-3 overflow-hidden bg-ground p-4 text-ink" data-testid="wall">
      <div className="flex items-center justify-between gap-4">
        <h1 className="text-3xl font-semibold">Wall</h1>
        <div className="num flex items-center gap-6 text-2xl">
          <span className={connected ? "text-muted" : "text-high"}>{connected ? "● live" : "○ reconnecting"}</span>
          <span className="font-mono">{clock} UTC</span>
          <span aria-live="polite" data-testid="wall-page">
            page {current + 1} / {pages}
            {paused ? " (paused)" : ""}
          </span>
          <Link href="/" className="rounded border border-line px-3 py-1 text-lg">
            Leave wall
          </Link>
        </div>
      </div>
      <AreaSummaries areas={areas} big />
      <AlarmBand role={role} big />
      {pinned.length > 0 && (
        <section aria-label="Loops needing attention" className="grid gap-3" style={{ gridTemplateColumns: `repeat(${cols}, minmax(0, 1fr))` }}>
          {pinned.map((l) => (
            <div key={l.id} style={{ height: TILE_H }}>
              <LoopTile loop={store.get(l.id) ?? l} spark={store.spark(l.id)} now={nowS} big levels={levels} />
            </div>
          ))}
        </section>
      )}
      <section aria-label={`Loops, page ${current + 1} of ${pages}`} className="grid flex-1 content-start gap-3" style={{ gridTemplateColumns: `repeat(${cols}, minmax(0, 1fr))` }}>
        {pageLoops.map((l) => (
          <div key={l.id} style={{ height: TILE_H }}>
            <LoopTile loop={store.get(l.id) ?? l} spark={store.spark(l.id)} now={nowS} big levels={levels} />
          </div>
        ))}
      </section>
      <div className="flex items-center justify-between gap-4">
        <p className="text-base text-muted">{caution}</p>
        <div className="flex gap-2" aria-hidden="true">
          {Array.from({ length: pages }, (_, i) => (
            <span key={i} className={`inline-block h-3 w-8 rounded-sm ${i === current ? "bg-ink" : "bg-line"}`} />
          ))}
        </div>
      </div>
    </div>
  );
}
