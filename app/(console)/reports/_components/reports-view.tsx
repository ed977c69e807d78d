"use client";
/**
 * Loop-health report of the tenant: how many loops in each tracker state, how the decay ratios
 * spread against the alarm levels, the loops closest to their levels, and the alarm figures.
 */
import Link from "next/link";
import { useMemo } from "react";
import { TRACKER_STATES } from "@/lib/domain/types";
import { fmt } from "@/lib/client/format";
import { useDecayLevels, useLoops, useNow } from "@/lib/client/hooks";
import { dataAge, sortWorstFirst } from "@/lib/client/order";
import { KpiCharts } from "@/app/_components/kpi-charts";

const BINS = [0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0001];

export function ReportsView() {
  const { loops, isLoading } = useLoops();
  const now = useNow(10_000);
  const levels = useDecayLevels("tenant");
  const byState = useMemo(() => {
    const m = new Map<string, number>();
    for (const l of loops) m.set(l.state?.trackerState ?? "no estimate", (m.get(l.state?.trackerState ?? "no estimate") ?? 0) + 1);
    return m;
  }, [loops]);
  const hist = useMemo(() => {
    const h = new Array<number>(BINS.length - 1).fill(0);
    let none = 0;
    for (const l of loops) {
      const d = l.state?.decayRatio;
      if (d == null) {
        none++;
        continue;
      }
      const i = BINS.findIndex((b, k) => k < BINS.length - 1 && d >= b && d < BINS[k + 1]!);
      h[i < 0 ? h.length - 1 : i]!++;
    }
    return { h, none };
  }, [loops]);
  const worst = useMemo(() => sortWorstFirst(loops, levels.high).slice(0, 10), [loops, levels.high]);
  const stale = loops.filter((l) => dataAge(l.state, now).stale).length;
  const maxBin = Math.max(1, ...hist.h);
  return (
    <div className="flex flex-col gap-4">
      <h1 className="text-xl font-semibold">Reports</h1>
      {isLoading && <p className="text-muted">Loading…</p>}
      <div className="grid gap-4 md:grid-cols-3">
        <section className="rounded-md border border-line bg-surface p-3" aria-label="Tracker states">
          <h2 className="mb-2 font-semibold">Loops by tracker state</h2>
          <dl className="num text-sm">
            {[...TRACKER_STATES, "no estimate"].map((s) => (
              <div key={s} className="flex justify-between border-b border-line/40 py-0.5">
                <dt>{s}</dt>
                <dd>{byState.get(s) ?? 0}</dd>
              </div>
            ))}
            <div className="flex justify-between py-0.5 font-semibold">
              <dt>all loops ({stale} with stale data)</dt>
              <dd>{loops.length}</dd>
            </div>
          </dl>
        </section>
        <section className="rounded-md border border-line bg-surface p-3" aria-label="Decay ratio distribution">
          <h2 className="mb-2 font-semibold">Decay ratio of the dominant oscillation</h2>
          <svg width="100%" viewBox="0 0 220 120" role="img" aria-label="Histogram of decay ratios across loops">
            {hist.h.map((n, i) => {
              const h = (n / maxBin) * 90;
              return <rect key={i} x={10 + i * 20} y={100 - h} width="17" height={h} fill="var(--rg-ink)" opacity="0.8" />;
            })}
            {[levels.low, levels.high].map((lv, i) => (
              <line key={i} x1={10 + lv * 200} x2={10 + lv * 200} y1="5" y2="100" stroke={i ? "var(--rg-high)" : "var(--rg-muted)"} strokeDasharray="3 2" />
            ))}
            <line x1="10" x2="210" y1="100" y2="100" stroke="var(--rg-line)" />
            {[0, 0.5, 1].map((t) => (
              <text key={t} x={10 + t * 200} y="114" fontSize="9" textAnchor="middle" fill="var(--rg-muted)">
                {t}
              </text>
            ))}
          </svg>
          <p className="text-xs text-muted">
            Dashed: the tenant&apos;s low ({levels.low}) and high ({levels.high}) levels. {hist.none} loop(s) have no oscillating mode.
          </p>
        </section>
        <section className="rounded-md border border-line bg-surface p-3" aria-label="Closest to the levels">
          <h2 className="mb-2 font-semibold">Closest to their alarm level</h2>
          <ol className="num text-sm">
            {worst.map((l) => (
              <li key={l.id} className="flex justify-between gap-2 border-b border-line/40 py-0.5">
                <Link href={`/loops/${l.id}`} className="font-mono hover:underline">
                  {l.tag}
                </Link>
                <span className="font-mono text-muted">
                  ρ {fmt(l.state?.spectralRadius ?? null)} · DR {fmt(l.state?.decayRatio ?? null, 2)}
                </span>
              </li>
            ))}
          </ol>
        </section>
      </div>
      <KpiCharts />
    </div>
  );
}
