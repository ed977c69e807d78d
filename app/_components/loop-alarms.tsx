"use client";
/** The alarms of one loop with their event log (who, when, what, comment). */
import { useState } from "react";
import useSWR from "swr";
import type { Role } from "@/lib/domain/types";
import { roleAtLeast } from "@/lib/domain/types";
import { fetchJson } from "@/lib/client/fetcher";
import { CONDITION_WORDS, fmt, fmtTime } from "@/lib/client/format";
import { useAlarms } from "@/lib/client/hooks";
import { AlarmActions } from "./alarm-actions";
import { PriorityMark } from "./priority-mark";
import { TableHead } from "@/app/_components/table-head";

interface AlarmEventDto {
  id?: number;
  at: string;
  kind?: string;
  fromState?: string | null;
  toState?: string | null;
  userName?: string | null;
  userEmail?: string | null;
  userId?: number | null;
  comment?: string | null;
}

export function LoopAlarms({ loopId, role }: { loopId: number; role: Role }) {
  const { alarms, error, isLoading, mutate } = useAlarms(`?loopId=${loopId}`);
  const [open, setOpen] = useState<number | null>(null);
  if (error) return <p className="text-sm text-urgent">Could not load alarms: {error.message}</p>;
  if (isLoading) return <p className="text-sm text-muted">Loading…</p>;
  if (alarms.length === 0) return <p className="text-sm text-muted">This loop has raised no alarms.</p>;
  return (
    <ul className="divide-y divide-line">
      {alarms.map((a) => (
        <li key={a.id} className="py-2">
          <div className="flex flex-wrap items-center gap-3 text-sm">
            <PriorityMark priority={a.priority} state={a.state} shelvedUntil={a.shelvedUntil} />
            <span>{CONDITION_WORDS[a.condition] ?? a.condition}</span>
            <span className="text-muted">{a.message}</span>
            <span className="num font-mono text-muted">
              value {fmt(a.value)} / level {fmt(a.level)}
            </span>
            <span className="num text-muted">changed {fmtTime(a.changedAt)}</span>
            {roleAtLeast(role, "operator") && <AlarmActions alarm={a} onDone={mutate} compact />}
            <button type="button" className="text-sm text-accent underline-offset-2 hover:underline" aria-expanded={open === a.id} onClick={() => setOpen(open === a.id ? null : a.id)}>
              {open === a.id ? "Hide events" : "Events"}
            </button>
          </div>
          {open === a.id && <AlarmEvents alarmId={a.id} />}
        </li>
      ))}
    </ul>
  );
}

export function AlarmEvents({ alarmId }: { alarmId: number }) {
  const { data, error } = useSWR(`/api/alarms/${alarmId}`, (u: string) => fetchJson<Record<string, unknown>>(u));
  if (error) return <p className="text-sm text-urgent">{(error as Error).message}</p>;
  if (!data) return <p className="text-sm text-muted">Loading events…</p>;
  const inner = (data.alarm && typeof data.alarm === "object" ? { ...(data.alarm as object), ...data } : data) as Record<string, unknown>;
  const events = (Array.isArray(inner.events) ? inner.events : []) as AlarmEventDto[];
  if (events.length === 0) return <p className="text-sm text-muted">No events recorded.</p>;
  return (
    <table className="mt-2 w-full text-xs">
      <TableHead columns={["when", "what", "who", "comment"]} rowClassName="text-left text-muted" cell="" lastCell="" />
      <tbody>
        {events.map((e, i) => (
          <tr key={e.id ?? i} className="border-t border-line/50">
            <td className="num py-0.5 pr-2 font-mono">{fmtTime(e.at)}</td>
            <td className="py-0.5 pr-2">
              {e.kind ?? ""} {e.fromState || e.toState ? `${e.fromState ?? "—"} → ${e.toState ?? "—"}` : ""}
            </td>
            <td className="py-0.5 pr-2">{e.userName ?? e.userEmail ?? (e.userId ? `user ${e.userId}` : "system")}</td>
            <td className="py-0.5">{e.comment ?? ""}</td>
          </tr>
        ))}
      </tbody>
    </table>
  );
}
