"use client";
/**
 * The loop inventory: search, filters, sortable health columns and the routine-data finding
 * (from the loop's assessment, `state.routine`); worst first by default (lib/client/order.ts).
 */
import {
  createColumnHelper,
  flexRender,
} from "@tanstack/react-table";
import Link from "next/link";
import { useMemo, useState } from "react";
import type { Role } from "@/lib/domain/types";
import { TRACKER_STATES, roleAtLeast } from "@/lib/domain/types";
import { fmt, fmtAge, fmtSeconds } from "@/lib/client/format";
import { useDecayLevels, useLoops, useNow } from "@/lib/client/hooks";
import { compareWorstFirst, dataAge, worstPriority } from "@/lib/client/order";
import { FINDING_WORDS, findingRank } from "@/lib/domain/findings";
import { FindingMark } from "@/app/_components/finding-mark";
import { FilterCheck, FilterInput, FilterRow, FilterSelect } from "@/app/_components/form-field";
import { PriorityMark } from "@/app/_components/priority-mark";
import { SortableHead } from "@/app/_components/sortable-head";
import { EmptyRow, TablePager, usePagedTable } from "@/app/_components/table-pager";
import { TrackerStateBadge } from "@/app/_components/tracker-state-badge";

/** A row as the live loop list gives it (its state may be a live summary rather than the full DTO). */
type Row = ReturnType<typeof useLoops>["loops"][number];
const col = createColumnHelper<Row>();

export function LoopInventory({ role }: { role: Role }) {
  const { loops, error, isLoading } = useLoops();
  const now = useNow(5000);
  const levels = useDecayLevels("tenant");
  const [q, setQ] = useState("");
  const [site, setSite] = useState("");
  const [tracker, setTracker] = useState("");
  const [alarmOnly, setAlarmOnly] = useState(false);
  const [finding, setFinding] = useState("");
  const sites = useMemo(() => [...new Set(loops.map((l) => l.siteName))].sort(), [loops]);
  const rows = useMemo(() => {
    const f = q.trim().toLowerCase();
    return loops.filter(
      (l) =>
        (!f || l.tag.toLowerCase().includes(f) || l.description.toLowerCase().includes(f) || (l.area ?? "").toLowerCase().includes(f)) &&
        (!site || l.siteName === site) &&
        (!tracker || l.state?.trackerState === tracker) &&
        (!alarmOnly || worstPriority(l) !== null) &&
        (!finding || (l.state?.routine ? FINDING_WORDS[l.state.routine.label] : "not judged yet") === finding),
    );
  }, [loops, q, site, tracker, alarmOnly, finding]);
  const num = (v: number | null | undefined) => (v == null || !Number.isFinite(v) ? null : v);
  const columns = useMemo(
    () => [
      // an accessor column (display columns cannot sort in TanStack Table); the value is unused
      col.accessor((l) => l.id, {
        id: "worst",
        header: "Alarm",
        sortingFn: (a, b) => compareWorstFirst(a.original, b.original, levels.high),
        cell: (c) => {
          const p = worstPriority(c.row.original);
          const a = c.row.original.alarms.find((x) => x.priority === p);
          return p && a ? <PriorityMark priority={p} state={a.state} size={16} /> : <span className="text-muted">—</span>;
        },
      }),
      col.accessor("tag", { header: "Tag", cell: (c) => <Link className="whitespace-nowrap font-mono font-semibold hover:underline" href={`/loops/${c.row.original.id}`}>{c.getValue()}</Link> }),
      col.accessor("description", { header: "Description", enableSorting: false }),
      col.accessor((l) => `${l.siteName}${l.area ? ` · ${l.area}` : ""}`, { id: "where", header: "Site · area" }),
      col.accessor("kind", { header: "Kind" }),
      col.accessor((l) => l.state?.trackerState ?? "", { id: "tracker", header: "Tracker", cell: (c) => <TrackerStateBadge state={c.row.original.state?.trackerState ?? null} reason={c.row.original.state?.stateReason} /> }),
      // sorted by work first (findings that open a work-list item), then by confidence, highest first
      col.accessor((l) => (l.state?.routine ? findingRank(l.state.routine) * 2 - l.state.routine.confidence : undefined), {
        id: "finding",
        header: "Finding",
        sortUndefined: "last",
        cell: (c) => <FindingMark finding={c.row.original.state?.routine} compact />,
      }),
      col.accessor((l) => num(l.state?.spectralRadius), { id: "radius", header: "ρ", sortUndefined: "last", cell: (c) => <span className="num font-mono">{fmt(c.getValue())}</span> }),
      col.accessor((l) => num(l.state?.decayRatio), { id: "decay", header: "Decay ratio", sortUndefined: "last", cell: (c) => <span className="num font-mono">{fmt(c.getValue(), 2)}</span> }),
      col.accessor((l) => num(l.state?.dominant?.zeta), { id: "zeta", header: "ζ", sortUndefined: "last", cell: (c) => <span className="num font-mono">{fmt(c.getValue(), 2)}</span> }),
      col.accessor((l) => num(l.state?.gainHeadroom), { id: "headroom", header: "Gain headroom", sortUndefined: "last", cell: (c) => <span className="num font-mono">{c.getValue() == null ? "—" : `× ${fmt(c.getValue(), 2)}`}</span> }),
      col.accessor("estimationPeriodS", { header: "Est. period", cell: (c) => <span className="num">{fmtSeconds(c.getValue())}</span> }),
      col.accessor((l) => dataAge(l.state, now).ageS, {
        id: "age",
        header: "Data age",
        sortUndefined: "last",
        cell: (c) => {
          const { ageS, stale } = dataAge(c.row.original.state, now);
          return <span className={`num ${stale ? "text-suppressed" : ""}`}>{stale ? "stale · " : ""}{fmtAge(ageS)}</span>;
        },
      }),
    ],
    [now, levels.high],
  );
  const table = usePagedTable(rows, columns, 50, [{ id: "worst", desc: false }]);
  return (
    <div className="flex flex-col gap-3">
      <div className="flex flex-wrap items-end justify-between gap-3">
        <h1 className="text-xl font-semibold">Loops</h1>
        {roleAtLeast(role, "engineer") && (
          <Link href="/loops/new" className="rounded bg-accent px-3 py-1 font-semibold text-accent-ink">
            Add a loop
          </Link>
        )}
      </div>
      <FilterRow label="Loop filters">
        <FilterInput label="Search" value={q} onChange={setQ} placeholder="tag, text, area" />
        <FilterSelect label="Site" value={site} onChange={setSite} options={sites} />
        <FilterSelect label="Tracker state" value={tracker} onChange={setTracker} options={TRACKER_STATES} />
        <FilterSelect label="Finding" value={finding} onChange={setFinding} options={Object.values(FINDING_WORDS)} />
        <FilterCheck label="with alarms only" checked={alarmOnly} onChange={setAlarmOnly} />
      </FilterRow>
      {error && <p role="alert" className="text-urgent">Could not load loops: {error.message}</p>}
      <div className="overflow-x-auto rounded-md border border-line bg-surface">
        <table className="w-full text-sm" data-testid="loop-table">
          <SortableHead table={table} nowrap />
          <tbody>
            {table.getRowModel().rows.map((r) => (
              <tr key={r.id} className="border-b border-line/60 hover:bg-raised">
                {r.getVisibleCells().map((c) => (
                  <td key={c.id} className="px-2 py-1">
                    {flexRender(c.column.columnDef.cell, c.getContext())}
                  </td>
                ))}
              </tr>
            ))}
            {rows.length === 0 && <EmptyRow span={columns.length}>{isLoading ? "Loading…" : loops.length === 0 ? "No loops yet." : "No loop matches the filters."}</EmptyRow>}
          </tbody>
        </table>
      </div>
      <TablePager table={table} count={<>{rows.length} of {loops.length} loops</>} />
    </div>
  );
}
