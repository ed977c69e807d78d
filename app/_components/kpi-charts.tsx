"use client";
/**
 * Alarm-system figures of a period (from `GET /api/alarms/kpis`): rate per 10 minutes per
 * area against the published guidance, time in flood, the ten most frequent alarms' share,
 * chattering and stale alarms, and the priority distribution against ~80/15/5 (EEMUA 191,
 * ANSI/ISA-18.2; values as stated by the alarms service).
 */
import { useState } from "react";
import useSWR from "swr";
import type { AlarmKpis } from "@/lib/domain/alarms/kpis";
import { fetchJson, query } from "@/lib/client/fetcher";
import { fmt } from "@/lib/client/format";
import { PriorityShape } from "./priority-mark";

const PERIODS = [
  { key: "24h", label: "24 h", ms: 86400e3 },
  { key: "7d", label: "7 days", ms: 7 * 86400e3 },
  { key: "30d", label: "30 days", ms: 30 * 86400e3 },
];

function Bar({ value, max, target, label }: { value: number; max: number; target?: number; label: string }) {
  const w = 220;
  const x = (v: number) => Math.max(0, Math.min(w, (v / (max || 1)) * w));
  return (
    <svg width={w + 2} height="14" role="img" aria-label={label}>
      <rect x="1" y="3" width={w} height="8" fill="var(--rg-line)" />
      <rect x="1" y="3" width={x(value)} height="8" fill="var(--rg-ink)" />
      {target !== undefined && <line x1={x(target) + 1} x2={x(target) + 1} y1="0" y2="14" stroke="var(--rg-accent)" strokeWidth="2" />}
    </svg>
  );
}

export function KpiCharts() {
  const [period, setPeriod] = useState(PERIODS[0]!);
  const [to] = useState(() => Date.now());
  const url = `/api/alarms/kpis${query({ from: new Date(to - period.ms).toISOString(), to: new Date(to).toISOString() })}`;
  const { data, error, isLoading } = useSWR(url, (u: string) => fetchJson<AlarmKpis | { kpis: AlarmKpis }>(u));
  const k = data && "kpis" in data ? data.kpis : (data as AlarmKpis | undefined);
  const loops = useSWR("/api/loops", (u: string) => fetchJson<{ loops?: { id: number; tag: string }[] }>(u));
  const tagOf = (id: number) => loops.data?.loops?.find((l) => l.id === id)?.tag ?? `loop ${id}`;
  return (
    <section className="flex flex-col gap-3 rounded-md border border-line bg-surface p-3" aria-label="Alarm figures" data-testid="kpis">
      <div className="flex flex-wrap items-center justify-between gap-2">
        <h2 className="text-lg font-semibold">Alarm figures of the period</h2>
        <div role="group" aria-label="Period" className="flex gap-1">
          {PERIODS.map((p) => (
            <button key={p.key} type="button" aria-pressed={p.key === period.key} onClick={() => setPeriod(p)} className={`rounded border px-2 py-0.5 text-sm ${p.key === period.key ? "border-accent bg-raised" : "border-line"}`}>
              {p.label}
            </button>
          ))}
        </div>
      </div>
      {error && <p className="text-sm text-urgent">Could not load the figures: {(error as Error).message}</p>}
      {isLoading && <p className="text-sm text-muted">Loading…</p>}
      {k && (
        <div className="grid gap-4 md:grid-cols-3">
          <div>
            <h3 className="font-semibold">Rate per 10 minutes</h3>
            <p className="text-xs text-muted">Guidance: about 1 acceptable, 2 the most manageable per operator (ISA-18.2). Blue line = 1.</p>
            <dl className="num mt-1 text-sm">
              <div className="flex items-center justify-between gap-2">
                <dt>all areas, average</dt>
                <dd className="flex items-center gap-2">
                  <Bar value={k.overall.averagePer10Min} max={Math.max(2, k.overall.peakPer10Min)} target={1} label="average rate" />
                  {fmt(k.overall.averagePer10Min, 2)}
                </dd>
              </div>
              <div className="flex items-center justify-between gap-2">
                <dt>peak</dt>
                <dd className="flex items-center gap-2">
                  <Bar value={k.overall.peakPer10Min} max={Math.max(2, k.overall.peakPer10Min)} target={1} label="peak rate" />
                  {k.overall.peakPer10Min}
                </dd>
              </div>
              <div className="flex justify-between">
                <dt>time in flood (&gt; 10 in 10 min)</dt>
                <dd>{fmt(k.overall.percentTimeInFlood, 1)} %</dd>
              </div>
              <div className="flex justify-between">
                <dt>alarms in period</dt>
                <dd>{k.totalAlarms}</dd>
              </div>
            </dl>
          </div>
          <div>
            <h3 className="font-semibold">Priority distribution</h3>
            <p className="text-xs text-muted">Blue line = the usual target share.</p>
            <ul className="mt-1 flex flex-col gap-1 text-sm">
              {k.priority.map((p) => (
                <li key={p.priority} className="flex items-center gap-2">
                  <PriorityShape priority={p.priority} size={16} />
                  <span className="w-14">{p.priority}</span>
                  <Bar value={p.percent} max={100} target={p.targetPercent} label={`${p.priority} ${p.percent} percent`} />
                  <span className="num">
                    {fmt(p.percent, 0)} % ({p.count})
                  </span>
                </li>
              ))}
            </ul>
          </div>
          <div>
            <h3 className="font-semibold">Bad actors</h3>
            <dl className="num text-sm">
              <div className="flex justify-between">
                <dt>top ten share of all alarms</dt>
                <dd>{fmt(k.topTenSharePercent, 1)} %</dd>
              </div>
              <div className="flex justify-between">
                <dt>chattering (≥ 3 in 60 s)</dt>
                <dd>{k.chattering.length}</dd>
              </div>
              <div className="flex justify-between">
                <dt>stale (active &gt; 24 h)</dt>
                <dd>{k.stale.length}</dd>
              </div>
            </dl>
            {k.topTen.length > 0 && (
              <ol className="mt-1 list-decimal pl-5 text-xs">
                {k.topTen.map((t) => (
                  <li key={t.alarmId}>
                    <a className="font-mono hover:underline" href={`/loops/${t.loopId}`}>
                      {tagOf(t.loopId)}
                    </a>{" "}
                    — {t.count}×
                  </li>
                ))}
              </ol>
            )}
          </div>
        </div>
      )}
    </section>
  );
}
