"use client";
/**
 * The engineering work list: items per site and status, one open item per loop and finding; an
 * item shows its evidence, the figures at open beside the latest, its history, and (engineers)
 * status, owner and notes. Neutral ink only: findings never use the alarm priority colours.
 */
import Link from "next/link";
import { useMemo, useState } from "react";
import useSWR from "swr";
import { FindingMark } from "@/app/_components/finding-mark";
import { fetchJson, sendJson } from "@/lib/client/fetcher";
import type { FindingFigures } from "@/lib/domain/findings";
import type { WorkItemDto, WorkItemEventDto, WorkStatus } from "@/lib/work-list/queries";
import { FindingRules } from "./finding-rules";
import { IdOptions } from "@/app/_components/id-options";

type ListBody = { items: WorkItemDto[]; owners: { id: number; name: string }[] };
const STATUS_WORDS: Record<WorkStatus, string> = { open: "open", "in-work": "in work", closed: "closed" };
const FILTERS = ["active", "open", "in-work", "closed", "all"] as const;

const num = (v: number | null, unit = "") => (v === null ? "–" : `${Number(v.toPrecision(3))}${unit}`);
const pct = (v: number | null) => (v === null ? "–" : `${(100 * v).toFixed(0)} %`);
const FIGURE_ROWS: [string, (f: FindingFigures) => string][] = [
  ["finding", (f) => `${f.label} (${f.confidence.toFixed(2)})`],
  ["oscillation period", (f) => num(f.oscillationPeriodS, " s")],
  ["oscillation amplitude", (f) => num(f.oscillationAmplitude)],
  ["Harris index", (f) => num(f.harrisIndex)],
  ["valve stiction", (f) => f.stiction],
  ["idle index", (f) => num(f.idleIndex)],
  ["service factor", (f) => pct(f.serviceFactor)],
  ["saturation", (f) => pct(f.saturation)],
  ["valve travel", (f) => num(f.valveTravelPctPerHour, " %/h")],
  ["reversals", (f) => num(f.valveReversalsPerHour, " /h")],
  ["assessed", (f) => new Date(f.at).toISOString().slice(0, 16).replace("T", " ")],
];

function ItemDetail({ id, canEdit, owners, onChanged }: { id: number; canEdit: boolean; owners: { id: number; name: string }[]; onChanged: () => void }) {
  const { data, error, mutate } = useSWR(`/api/work-list/${id}`, (u: string) => fetchJson<{ item: WorkItemDto; history: WorkItemEventDto[] }>(u));
  const [note, setNote] = useState("");
  const [busy, setBusy] = useState(false);
  const [problem, setProblem] = useState<string | null>(null);
  if (error) return <p className="text-sm text-muted">Could not load the item: {(error as Error).message}</p>;
  if (!data) return <p className="text-sm text-muted">Loading…</p>;
  const { item, history } = data;
  const send = async (patch: Record<string, unknown>) => {
    setBusy(true);
    setProblem(null);
    try {
      await sendJson(`/api/work-list/${id}`, "PATCH", { ...patch, ...(note.trim() ? { note: note.trim() } : {}) });
      setNote("");
      await mutate();
      onChanged();
    } catch (e) {
      setProblem(e instanceof Error ? e.message : String(e));
    } finally {
      setBusy(false);
    }
  };
  return (
    <div className="flex flex-col gap-3 p-3" data-testid="work-item-detail">
      <ul className="list-disc pl-5 text-sm">
        {item.evidence.map((l, i) => (
          <li key={i}>{l}</li>
        ))}
      </ul>
      <table className="text-sm">
        <thead>
          <tr className="text-left text-muted">
            <th className="pr-4 font-normal">figure</th>
            <th className="pr-4 font-normal">at open</th>
            <th className="font-normal">latest</th>
          </tr>
        </thead>
        <tbody>
          {FIGURE_ROWS.map(([name, f]) => (
            <tr key={name}>
              <td className="pr-4 text-muted">{name}</td>
              <td className="num pr-4 font-mono">{f(item.figuresAtOpen)}</td>
              <td className="num font-mono">{f(item.figuresLatest)}</td>
            </tr>
          ))}
        </tbody>
      </table>
      <ol className="flex flex-col gap-1 text-sm">
        {history.map((h) => (
          <li key={h.id}>
            <span className="num font-mono text-muted">{h.at.slice(0, 16).replace("T", " ")}</span>{" "}
            {h.kind === "opened" ? "opened by the assessment" : h.kind === "owner" ? `owner: ${h.owner?.name ?? "none"}` : h.kind === "note" ? "note" : `${STATUS_WORDS[h.fromStatus ?? "open"]} → ${STATUS_WORDS[h.toStatus ?? "open"]}`}
            {h.by ? ` · ${h.by.name}` : ""}
            {h.note ? ` — ${h.note}` : ""}
          </li>
        ))}
      </ol>
      {canEdit && (
        <div className="flex flex-wrap items-end gap-2">
          <label className="flex flex-col text-sm">
            note
            <input className="w-72 rounded border border-line bg-raised px-2 py-1" value={note} maxLength={2000} onChange={(e) => setNote(e.target.value)} />
          </label>
          <label className="flex flex-col text-sm">
            owner
            <select className="rounded border border-line bg-raised px-2 py-1" value={item.owner?.id ?? ""} disabled={busy} onChange={(e) => void send({ ownerId: e.target.value ? Number(e.target.value) : null })}>
              <option value="">none</option>
              <IdOptions rows={owners} label="name" />
            </select>
          </label>
          {(["open", "in-work", "closed"] as const).filter((s) => s !== item.status).map((s) => (
            <button key={s} type="button" disabled={busy} className="rounded border border-line px-3 py-1 text-sm hover:bg-raised" onClick={() => void send({ status: s })}>
              {item.status === "closed" ? "reopen" : s === "closed" ? "close (with note)" : `mark ${STATUS_WORDS[s]}`}
            </button>
          ))}
          <button type="button" disabled={busy || !note.trim()} className="rounded border border-line px-3 py-1 text-sm hover:bg-raised" onClick={() => void send({})}>
            add note
          </button>
          {problem && <p role="alert" className="w-full text-sm">{problem}</p>}
        </div>
      )}
    </div>
  );
}

export function WorkListView({ canEdit, initialItem }: { canEdit: boolean; initialItem: number | null }) {
  const [filter, setFilter] = useState<(typeof FILTERS)[number]>("active");
  const [site, setSite] = useState<number | "all">("all");
  const [open, setOpen] = useState<number | null>(initialItem);
  const { data, error, mutate } = useSWR(`/api/work-list?status=${filter}`, (u: string) => fetchJson<ListBody>(u), { refreshInterval: 30_000 });
  const sites = useMemo(() => [...new Map((data?.items ?? []).map((i) => [i.siteId, i.siteName])).entries()], [data]);
  const items = (data?.items ?? []).filter((i) => site === "all" || i.siteId === site);
  return (
    <div className="flex flex-col gap-3">
      <div className="flex flex-wrap items-center gap-2">
        <div role="tablist" aria-label="Status" className="flex gap-1">
          {FILTERS.map((f) => (
            <button key={f} role="tab" aria-selected={filter === f} type="button" onClick={() => setFilter(f)} className={`rounded border px-3 py-1 text-sm ${filter === f ? "border-accent bg-raised" : "border-line"}`}>
              {f === "active" ? "open and in work" : f === "in-work" ? "in work" : f}
            </button>
          ))}
        </div>
        <label className="text-sm">
          site{" "}
          <select className="rounded border border-line bg-raised px-2 py-1" value={site} onChange={(e) => setSite(e.target.value === "all" ? "all" : Number(e.target.value))}>
            <option value="all">all</option>
            {sites.map(([id, name]) => (
              <option key={id} value={id}>{name}</option>
            ))}
          </select>
        </label>
      </div>
      {error && <p role="alert" className="text-sm">Could not load the work list: {(error as Error).message}</p>}
      <div className="overflow-x-auto rounded-md border border-line bg-surface">
        <table className="w-full text-sm" data-testid="work-list-table">
          <thead>
            <tr className="border-b border-line text-left text-muted">
              <th className="px-2 py-1 font-normal">loop</th>
              <th className="px-2 py-1 font-normal">site</th>
              <th className="px-2 py-1 font-normal">finding</th>
              <th className="px-2 py-1 font-normal">status</th>
              <th className="px-2 py-1 font-normal">owner</th>
              <th className="px-2 py-1 font-normal">opened (UTC)</th>
              <th className="px-2 py-1 font-normal">last seen</th>
            </tr>
          </thead>
          <tbody>
            {items.length === 0 && (
              <tr>
                <td colSpan={7} className="px-2 py-3 text-muted">{data ? "No items." : "Loading…"}</td>
              </tr>
            )}
            {items.map((i) => (
              <WorkRow key={i.id} item={i} open={open === i.id} onToggle={() => setOpen(open === i.id ? null : i.id)}>
                <ItemDetail id={i.id} canEdit={canEdit} owners={data?.owners ?? []} onChanged={() => void mutate()} />
              </WorkRow>
            ))}
          </tbody>
        </table>
      </div>
      {canEdit && <FindingRules />}
    </div>
  );
}

function WorkRow({ item: i, open, onToggle, children }: { item: WorkItemDto; open: boolean; onToggle: () => void; children: React.ReactNode }) {
  return (
    <>
      <tr className="border-b border-line/60" data-testid="work-list-row">
        <td className="px-2 py-1">
          <Link href={`/loops/${i.loopId}`} className="font-mono font-semibold hover:underline">{i.tag}</Link>
        </td>
        <td className="px-2 py-1">{i.siteName}</td>
        <td className="px-2 py-1">
          <button type="button" className="hover:underline" aria-expanded={open} onClick={onToggle}>
            <FindingMark finding={{ label: i.label, confidence: i.confidence, needsS: null, evidence: i.evidence }} />
          </button>
        </td>
        <td className="px-2 py-1">{STATUS_WORDS[i.status]}</td>
        <td className="px-2 py-1">{i.owner?.name ?? "–"}</td>
        <td className="num px-2 py-1 font-mono">{i.openedAt.slice(0, 16).replace("T", " ")}</td>
        <td className="num px-2 py-1 font-mono">{i.lastSeenAt.slice(0, 16).replace("T", " ")} · {i.seenCount}×</td>
      </tr>
      {open && (
        <tr>
          <td colSpan={7}>{children}</td>
        </tr>
      )}
    </>
  );
}
