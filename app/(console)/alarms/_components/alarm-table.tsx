"use client";
/**
 * Alarms as a table (TanStack Table): sorting, filters, paging; active or historical view;
 * operator actions per row for roles that may use them.
 */
import {
  createColumnHelper,
  flexRender,
} from "@tanstack/react-table";
import Link from "next/link";
import { Fragment, useMemo, useState } from "react";
import type { AlarmDto, Role } from "@/lib/domain/types";
import { ALARM_PRIORITIES, ALARM_STATES, roleAtLeast } from "@/lib/domain/types";
import { query } from "@/lib/client/fetcher";
import { ALARM_STATE_WORDS, CONDITION_WORDS, fmt, fmtStamp, fmtTime } from "@/lib/client/format";
import { useAlarms } from "@/lib/client/hooks";
import { ATTENTION_STATES } from "@/lib/client/order";
import { AlarmActions } from "@/app/_components/alarm-actions";
import { FilterCheck, FilterInput, FilterRow, FilterSelect } from "@/app/_components/form-field";
import { AlarmEvents } from "@/app/_components/loop-alarms";
import { PriorityMark } from "@/app/_components/priority-mark";
import { SortableHead } from "@/app/_components/sortable-head";
import { EmptyRow, TablePager, usePagedTable } from "@/app/_components/table-pager";

const col = createColumnHelper<AlarmDto>();
const PRIORITY_ORDER = { urgent: 0, high: 1, low: 2 } as const;
const STATE_OPTIONS = ALARM_STATES.map((s) => ({ value: s, label: ALARM_STATE_WORDS[s] ?? s }));

export function AlarmTable({ role }: { role: Role }) {
  const [view, setView] = useState<"active" | "history">("active");
  const [priority, setPriority] = useState("");
  const [state, setState] = useState("");
  const [tag, setTag] = useState("");
  const [from, setFrom] = useState("");
  const [to, setTo] = useState("");
  const [open, setOpen] = useState<number | null>(null);
  const [showSuppressed, setShowSuppressed] = useState(false);
  const qs = query({
    priority,
    state,
    from: view === "history" && from ? new Date(from).toISOString() : undefined,
    to: view === "history" && to ? new Date(to).toISOString() : undefined,
  });
  const { alarms, error, isLoading, mutate } = useAlarms(qs);
  // The alarm whose action dialog is open keeps its row until the dialog closes (see AlarmBand).
  const [pinnedId, setPinnedId] = useState<number | null>(null);
  const rows = useMemo(() => {
    const f = tag.trim().toLowerCase();
    const inView = (a: AlarmDto) =>
      view === "history" || (a.state !== "normal" && (showSuppressed || a.state !== "suppressed-by-design"));
    // Those that ask for a person first, then by priority; the table's own sort overrides this.
    const rank = (a: AlarmDto) => (ATTENTION_STATES.has(a.state) ? 0 : 1) * 10 + PRIORITY_ORDER[a.priority];
    return alarms
      .filter((a) => a.id === pinnedId || (inView(a) && (!f || a.loopTag.toLowerCase().includes(f) || a.message.toLowerCase().includes(f))))
      .sort((a, b) => rank(a) - rank(b) || (b.changedAt ?? "").localeCompare(a.changedAt ?? ""));
  }, [alarms, view, tag, showSuppressed, pinnedId]);
  const mayAct = roleAtLeast(role, "operator");
  const columns = useMemo(
    () => [
      col.accessor("priority", {
        header: "Priority",
        sortingFn: (a, b) => PRIORITY_ORDER[a.original.priority] - PRIORITY_ORDER[b.original.priority],
        cell: (c) => <PriorityMark priority={c.row.original.priority} state={c.row.original.state} showState={false} size={18} />,
      }),
      col.accessor("state", {
        header: "State",
        cell: (c) =>
          c.row.original.state === "shelved" && c.row.original.shelvedUntil
            ? `shelved until ${fmtTime(c.row.original.shelvedUntil)}`
            : (ALARM_STATE_WORDS[c.getValue()] ?? c.getValue()),
      }),
      col.accessor("loopTag", {
        header: "Loop",
        cell: (c) => (
          <Link href={`/loops/${c.row.original.loopId}`} className="whitespace-nowrap font-mono font-semibold hover:underline">
            {c.getValue()}
          </Link>
        ),
      }),
      col.accessor("condition", { header: "Condition", cell: (c) => CONDITION_WORDS[c.getValue()] ?? c.getValue() }),
      col.accessor("message", { header: "Message", enableSorting: false }),
      col.accessor("value", { header: "Value / level", cell: (c) => <span className="num font-mono">{fmt(c.getValue())} / {fmt(c.row.original.level)}</span> }),
      col.accessor("activatedAt", { header: "Activated (UTC)", cell: (c) => <span className="num whitespace-nowrap">{fmtStamp(c.getValue())}</span> }),
      col.accessor("changedAt", { header: "Changed (UTC)", cell: (c) => <span className="num whitespace-nowrap">{fmtStamp(c.getValue())}</span> }),
      col.display({
        id: "actions",
        header: "Actions",
        cell: (c) => (
          <span className="flex flex-wrap items-center gap-1">
            {mayAct && <AlarmActions alarm={c.row.original} onDone={mutate} onOpenChange={(o) => setPinnedId(o ? c.row.original.id : null)} compact />}
            <button type="button" className="text-xs text-accent hover:underline" aria-expanded={open === c.row.original.id} onClick={() => setOpen(open === c.row.original.id ? null : c.row.original.id)}>
              events
            </button>
          </span>
        ),
      }),
    ],
    [mayAct, mutate, open],
  );
  const table = usePagedTable(rows, columns, 25);
  const needing = alarms.filter((a) => ATTENTION_STATES.has(a.state)).length;
  return (
    <div className="flex flex-col gap-3">
      <FilterRow label="Alarm filters">
        <div role="tablist" aria-label="Alarm view" className="flex gap-1">
          {(["active", "history"] as const).map((v) => (
            <button key={v} role="tab" aria-selected={view === v} type="button" onClick={() => setView(v)} className={`rounded border px-3 py-1 text-sm ${view === v ? "border-accent bg-raised" : "border-line"}`}>
              {v === "active" ? `Active (${needing} need attention)` : "History"}
            </button>
          ))}
        </div>
        <FilterSelect label="Priority" value={priority} onChange={setPriority} options={ALARM_PRIORITIES} />
        <FilterSelect label="State" value={state} onChange={setState} options={STATE_OPTIONS} />
        <FilterInput label="Loop or text" value={tag} onChange={setTag} placeholder="e.g. FIC" />
        {view === "active" && <FilterCheck label="include suppressed by design" checked={showSuppressed} onChange={setShowSuppressed} />}
        {view === "history" && (
          <>
            <FilterInput type="datetime-local" label="From" value={from} onChange={setFrom} />
            <FilterInput type="datetime-local" label="To" value={to} onChange={setTo} />
          </>
        )}
      </FilterRow>
      {error && <p role="alert" className="text-urgent">Could not load alarms: {error.message}</p>}
      <div className="overflow-x-auto rounded-md border border-line bg-surface">
        <table className="w-full text-sm" data-testid="alarm-table">
          <SortableHead table={table} />
          <tbody>
            {table.getRowModel().rows.map((r) => (
              <Fragment key={r.id}>
                <tr className={`border-b border-line/60 ${r.original.state === "out-of-service" || r.original.state === "suppressed-by-design" ? "hatch-suppressed" : ""}`} data-testid="alarm-table-row">
                  {r.getVisibleCells().map((c) => (
                    <td key={c.id} className="px-2 py-1 align-middle">
                      {flexRender(c.column.columnDef.cell, c.getContext())}
                    </td>
                  ))}
                </tr>
                {open === r.original.id && (
                  <tr>
                    <td colSpan={columns.length} className="px-4 pb-2">
                      <AlarmEvents alarmId={r.original.id} />
                    </td>
                  </tr>
                )}
              </Fragment>
            ))}
            {rows.length === 0 && <EmptyRow span={columns.length}>{isLoading ? "Loading…" : view === "active" ? "No active alarms." : "No alarms in this period."}</EmptyRow>}
          </tbody>
        </table>
      </div>
      <TablePager table={table} count={<>{rows.length} alarms</>} />
    </div>
  );
}
