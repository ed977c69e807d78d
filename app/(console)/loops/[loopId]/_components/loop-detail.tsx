"use client";
/**
 * A loop in depth: SP/PV and MV trends, the spectral radius with its levels and forecast, the
 * z-plane (live, or at any moment of the history when scrubbed), the analysis panel, and the
 * loop's alarms with their events.
 */
import Link from "next/link";
import { useEffect, useMemo, useState } from "react";
import useSWR from "swr";
import type uPlot from "uplot";
import type { LoopSummary, Role } from "@/lib/domain/types";
import { roleAtLeast } from "@/lib/domain/types";
import { fetchJson, query } from "@/lib/client/fetcher";
import { fmt, fmtAge, fmtTime } from "@/lib/client/format";
import { parseHistory, snapshotAt, thinAligned } from "@/lib/client/history";
import { RANGES, type RangeKey } from "@/lib/client/ranges";
import { useDecayLevels, useLoop, useLoopSamples, useNow } from "@/lib/client/hooks";
import { dataAge } from "@/lib/client/order";
import { LoopTimeline } from "@/app/(console)/loops/[loopId]/_components/loop-timeline";
import { AnalysisPanel } from "./analysis-panel";
import { gaugeLevels } from "@/lib/domain/assessment";
import { LoopAlarms } from "@/app/_components/loop-alarms";
import { RimGauge } from "./rim-gauge";
import { TrackerStateBadge } from "@/app/_components/tracker-state-badge";
import { TrendChart } from "./trend-chart";
import { ZPlaneLegend, ZPlaneMap } from "./z-plane-map";


type LoopDetailData = LoopSummary & { mvLo?: number; mvHi?: number; mvUnits?: string };

export function LoopDetail({ loopId, role, initialRange = "1h" }: { loopId: number; role: Role; initialRange?: RangeKey }) {
  const { loop, state, trail, error } = useLoop(loopId);
  const now = useNow(1000);
  const [range, setRange] = useState<RangeKey>(initialRange);
  const [anchor, setAnchor] = useState(() => Date.now());
  const rangeMs = RANGES.find((r) => r.key === range)!.ms;
  const width = useWidth();
  const historyUrl = `/api/loops/${loopId}/history${query({ from: new Date(anchor - rangeMs).toISOString(), to: new Date(anchor).toISOString(), maxPoints: Math.max(200, Math.min(4000, Math.round(width))), shape: "columns" })}`;
  const hist = useSWR(historyUrl, (u: string) => fetchJson<unknown>(u), { keepPreviousData: true });
  const parsed = useMemo(() => parseHistory(hist.data), [hist.data]);
  const live = useLoopSamples(loopId, 3600);
  const [scrubT, setScrubT] = useState<number | null>(null);

  // Refresh the window's end every 30 s so short ranges move with time.
  useEffect(() => {
    const id = setInterval(() => setAnchor(Date.now()), 30_000);
    return () => clearInterval(id);
  }, []);

  const d = loop as LoopDetailData | null;
  const pvLo = d?.pvLo ?? 0;
  const pvHi = d?.pvHi ?? 100;
  const mvLo = d?.mvLo ?? 0;
  const mvHi = d?.mvHi ?? 100;

  // The history is thinned once per answer to min/max per pixel column of the chart (every
  // extreme survives, lib/client/history thinAligned), so live samples are appended to a few
  // thousand points, not copied with 86,400 of them, and the charts get at most their width.
  const columns = Math.ceil(width * Math.min(2, typeof window === "undefined" ? 1 : window.devicePixelRatio || 1));
  const thinProcess = useMemo(() => {
    const c = parsed.cols;
    return thinAligned([c.t, c.sp, c.pv, c.mv], columns).data;
  }, [parsed, columns]);
  const thinRadius = useMemo(() => {
    const c = parsed.cols;
    return thinAligned([c.t, c.radius], columns).data;
  }, [parsed, columns]);

  const processData = useMemo((): uPlot.AlignedData => {
    const [ht, hsp, hpv, hmv] = thinProcess as [ArrayLike<number>, ArrayLike<number | null>, ArrayLike<number | null>, ArrayLike<number | null>];
    const lastT = ht.length ? ht[ht.length - 1]! : -Infinity;
    const from = (anchor - rangeMs) / 1000;
    let k0 = live.samples.length;
    while (k0 > 0 && live.samples[k0 - 1]!.t / 1000 > lastT) k0--;
    const add = live.samples.slice(k0).filter((s) => s.t / 1000 >= from);
    // nothing live to add: the thinned history as it is (no copy)
    if (add.length === 0) return [ht, hsp, hpv, hmv] as unknown as uPlot.AlignedData;
    const n = ht.length;
    const t = new Array<number>(n + add.length);
    const sp = new Array<number | null>(n + add.length);
    const pv = new Array<number | null>(n + add.length);
    const mv = new Array<number | null>(n + add.length);
    for (let i = 0; i < n; i++) {
      t[i] = ht[i]!;
      sp[i] = hsp[i] ?? null;
      pv[i] = hpv[i] ?? null;
      mv[i] = hmv[i] ?? null;
    }
    add.forEach((s, j) => {
      t[n + j] = s.t / 1000;
      sp[n + j] = s.sp;
      pv[n + j] = s.pv;
      mv[n + j] = s.mv;
    });
    return [t, sp, pv, mv];
    // live.version changes whenever new samples arrive
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [thinProcess, live.version, anchor, rangeMs]);

  const dr = useDecayLevels("loop", loopId);
  const levels = state ? gaugeLevels(state, dr) : { warn: null, alarm: null };
  const radiusData = useMemo((): uPlot.AlignedData => {
    const [ht, hr] = thinRadius as [ArrayLike<number>, ArrayLike<number | null>];
    const snaps = parsed.snapshots;
    let any = false;
    for (let i = 0; i < hr.length && !any; i++) any = hr[i] != null;
    if (!any && snaps.length) {
      return [snaps.map((s) => s.t / 1000), snaps.map((s) => s.radius), snaps.map(() => null)];
    }
    // The tracker's forecast is the time at which the radius trend reaches 1 (the unit circle), so
    // the dotted continuation ends on the circle, not on the alarm level.
    const toRim = state?.forecast?.radiusOne ?? null;
    const forecast = toRim !== null && state?.spectralRadius != null;
    const n = ht.length;
    const m = n + (forecast ? 2 : 0);
    const t = new Array<number>(m);
    const r = new Array<number | null>(m);
    const fc = new Array<number | null>(m).fill(null);
    for (let i = 0; i < n; i++) {
      t[i] = ht[i]!;
      r[i] = hr[i] ?? null;
    }
    if (forecast) {
      t[n] = state.at / 1000;
      t[n + 1] = toRim!.at / 1000;
      r[n] = null;
      r[n + 1] = null;
      fc[n] = state.spectralRadius;
      fc[n + 1] = 1;
    }
    return [t, r, fc];
  }, [thinRadius, parsed.snapshots, state]);
  const rMin = useMemo(() => {
    const hr = thinRadius[1] as ArrayLike<number | null>;
    let m = 0.6;
    for (let i = 0; i < hr.length; i++) {
      const v = hr[i];
      if (v != null && v - 0.02 < m) m = v - 0.02;
    }
    return m;
  }, [thinRadius]);

  const forecastBand =
    state?.forecast?.radiusOne
      ? [{ x0: state.forecast.radiusOne.low / 1000, x1: state.forecast.radiusOne.high / 1000, y0: 1 - 0.004, y1: 1 + 0.004, fill: "rgba(240,176,73,0.35)", scale: "r" }]
      : [];

  const scrubSnap = scrubT !== null ? snapshotAt(parsed.snapshots, scrubT * 1000) : null;
  const { ageS, stale } = dataAge(state, now);
  const xRange: [number, number] = [(anchor - rangeMs) / 1000, Math.max(anchor, state?.forecast?.radiusOne?.high ?? 0) / 1000];

  if (error) return <p role="alert" className="text-urgent">Could not load this loop: {error.message}</p>;
  if (!loop) return <p className="text-muted">Loading loop…</p>;

  return (
    <div className="flex flex-col gap-4">
      <nav aria-label="Breadcrumb" className="text-sm text-muted">
        <Link href="/" className="hover:underline">Control room</Link> / <Link href="/loops" className="hover:underline">Loops</Link> / <span className="font-mono">{loop.tag}</span>
      </nav>
      <header className="flex flex-wrap items-end justify-between gap-3">
        <div>
          <h1 className="font-mono text-2xl font-semibold">{loop.tag}</h1>
          <p className="text-muted">
            {loop.description} · {loop.siteName}
            {loop.area ? ` · ${loop.area}` : ""} · {loop.kind} · {loop.units}
          </p>
        </div>
        <div className="flex flex-wrap items-center gap-4">
          <TrackerStateBadge state={state?.trackerState ?? null} reason={state?.stateReason} />
          <RimGauge radius={state?.spectralRadius ?? null} warn={levels.warn} alarm={levels.alarm} stale={stale} width={180} />
          <span className={`num text-sm ${stale ? "text-suppressed" : "text-muted"}`}>
            {stale ? "stale · " : ""}
            {fmtAge(ageS)}
          </span>
          <Link href={`/loops/${loop.id}/step-tests`} className="rounded border border-line px-2 py-1 text-sm hover:border-accent">
            Step tests
          </Link>
          <Link href={`/loops/${loop.id}/exports`} className="rounded border border-line px-2 py-1 text-sm hover:border-accent">
            Assess an export
          </Link>
          {roleAtLeast(role, "engineer") && (
            <Link href={`/loops/${loop.id}/edit`} className="rounded border border-line px-2 py-1 text-sm hover:border-accent">
              Edit loop
            </Link>
          )}
          {roleAtLeast(role, "engineer") && (
            <Link href={`/loops/${loop.id}/backfill`} className="rounded border border-line px-2 py-1 text-sm hover:border-accent">
              Historian backfill
            </Link>
          )}
        </div>
      </header>

      <div className="flex flex-wrap items-center gap-2" role="group" aria-label="Time range">
        {RANGES.map((r) => (
          <button
            key={r.key}
            type="button"
            aria-pressed={range === r.key}
            onClick={() => {
              setRange(r.key);
              setAnchor(Date.now());
            }}
            className={`rounded border px-2 py-0.5 text-sm ${range === r.key ? "border-accent bg-raised" : "border-line"}`}
          >
            {r.label}
          </button>
        ))}
        <span className="text-xs text-muted" data-testid="history-status" data-points={parsed.cols.t.length}>{hist.isLoading ? "loading history…" : hist.error ? `history unavailable: ${(hist.error as Error).message}` : `${parsed.cols.t.length} points`}</span>
        {live.error && <span className="text-xs text-high">live samples refused: {live.error}</span>}
      </div>

      {/* On wide screens the trends span both rows of the right column: the z-plane takes its
          height, the timeline the rest of the trends' height and scrolls within it. */}
      <div className="grid gap-4 xl:grid-cols-[minmax(0,1fr)_400px] xl:grid-rows-[auto_minmax(0,1fr)]">
        <section className="flex flex-col gap-1 rounded-md border border-line bg-surface p-2 xl:row-span-2" aria-label="Trends">
          <TrendChart
            data={processData.slice(0, 3) as uPlot.AlignedData}
            series={[
              { label: `SP (${loop.units})`, stroke: "var(--rg-muted)", dash: [6, 4], width: 1 },
              { label: `PV (${loop.units})`, stroke: "var(--rg-ink)", width: 1.6 },
            ]}
            scales={{ y: [pvLo, pvHi] }}
            axes={[{ scale: "y", label: loop.units }]}
            height={200}
            syncKey={`loop-${loopId}`}
            xRange={xRange}
            ariaLabel={`${loop.tag} set point and process value`}
          />
          <TrendChart
            data={[processData[0], processData[3]] as uPlot.AlignedData}
            series={[{ label: `MV (${d?.mvUnits ?? "%"})`, stroke: "var(--rg-accent)", width: 1.2 }]}
            scales={{ y: [mvLo, mvHi] }}
            axes={[{ scale: "y", label: d?.mvUnits ?? "%" }]}
            height={110}
            syncKey={`loop-${loopId}`}
            xRange={xRange}
            ariaLabel={`${loop.tag} controller output`}
          />
          <TrendChart
            data={radiusData}
            series={[
              { label: "spectral radius", stroke: "var(--rg-ink)", width: 1.4, scale: "r", points: (radiusData[1]?.length ?? 0) > 0 && (radiusData[1]?.length ?? 0) < 3 },
              { label: "forecast to radius 1", stroke: "var(--rg-high)", width: 1.4, dash: [2, 4], scale: "r" },
            ]}
            scales={{ r: [rMin, 1.02] }}
            axes={[{ scale: "r", label: "ρ" }]}
            levels={[
              { value: 1, label: "unit circle", stroke: "var(--rg-ink)", dash: [1, 0], scale: "r" },
              ...(levels.warn != null ? [{ value: levels.warn, label: `low level (DR ${dr.low})`, stroke: "var(--rg-muted)", scale: "r" }] : []),
              ...(levels.alarm != null ? [{ value: levels.alarm, label: `high level (DR ${dr.high})`, stroke: "var(--rg-high)", scale: "r" }] : []),
            ]}
            bands={forecastBand}
            height={170}
            syncKey={`loop-${loopId}`}
            xRange={xRange}
            onCursor={setScrubT}
            ariaLabel={`${loop.tag} spectral radius with warning and alarm levels`}
          />
          <p className="text-xs text-muted">Move the pointer over any trend to see the poles of that moment on the map. SP dashed, PV solid, MV below; scales fixed from the loop&apos;s range.</p>
        </section>
        <section className="flex flex-col items-center gap-2 rounded-md border border-line bg-surface p-2" aria-label="z-plane">
          <h2 className="self-start font-semibold">
            z-plane{" "}
            <span className="text-sm font-normal text-muted" data-testid="zplane-when">
              {scrubSnap ? `at ${fmtTime(scrubSnap.t)}` : "live"}
            </span>
          </h2>
          {scrubSnap ? (
            <ZPlaneMap
              modelPoles={scrubSnap.poles.map((p) => ({ ...p, radius: Math.hypot(p.re, p.im), sdRadius: null, cov: null }))}
              dataPoles={scrubSnap.dataPoles.map((p) => ({ ...p, radius: Math.hypot(p.re, p.im), sdRadius: null, cov: null }))}
              warnRadius={levels.warn}
              alarmRadius={levels.alarm}
              size={380}
            />
          ) : (
            <ZPlaneMap
              modelPoles={state?.modelPoles ?? []}
              dataPoles={state?.dataPoles ?? []}
              dataPolesKind={state?.dataPolesKind}
              zeros={state?.zeros ?? []}
              trail={trail}
              warnRadius={levels.warn}
              alarmRadius={levels.alarm}
              size={380}
              stale={stale}
            />
          )}
          {scrubSnap && (
            <button type="button" className="rounded border border-line px-2 py-0.5 text-sm" onClick={() => setScrubT(null)}>
              Back to live
            </button>
          )}
          <ZPlaneLegend dataPolesKind={state?.dataPolesKind ?? "disturbance-response"} />
          {parsed.snapshots.length > 1 && (
            <label className="flex w-full flex-col gap-1 text-xs text-muted">
              Scrub pole snapshots ({parsed.snapshots.length})
              <input
                type="range"
                min={0}
                max={parsed.snapshots.length - 1}
                value={scrubSnap ? Math.max(0, parsed.snapshots.indexOf(scrubSnap)) : parsed.snapshots.length - 1}
                onChange={(e) => setScrubT((parsed.snapshots[Number(e.target.value)]?.t ?? 0) / 1000)}
              />
            </label>
          )}
          <p className="num self-start font-mono text-sm">
            ρ {fmt(scrubSnap ? scrubSnap.radius : (state?.spectralRadius ?? null))} · DR {fmt(scrubSnap ? scrubSnap.decayRatio : (state?.decayRatio ?? null), 3)}
          </p>
        </section>
        <LoopTimeline loopId={loopId} role={role} />
      </div>

      <section className="rounded-md border border-line bg-surface p-3" aria-label="Analysis">
        <h2 className="mb-2 text-lg font-semibold">Analysis</h2>
        <AnalysisPanel state={state} now={now} />
      </section>
      <section className="rounded-md border border-line bg-surface p-3" aria-label="This loop's alarms">
        <h2 className="mb-2 text-lg font-semibold">Alarms of this loop</h2>
        <LoopAlarms loopId={loopId} role={role} />
      </section>
    </div>
  );
}

function useWidth(): number {
  // Known on the first client render (the page shows "Loading loop…" until then), so the
  // history is asked for once, not first for a guessed width and again for the real one.
  const [w] = useState(() => (typeof window === "undefined" ? 1000 : Math.round(window.innerWidth * 0.6)));
  return w;
}
