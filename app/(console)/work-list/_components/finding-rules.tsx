"use client";
/** An engineer's e-mail rules for work-list findings (mailed when a finding opens an item; never the operator's alarm mails). */
import { useState } from "react";
import useSWR from "swr";
import { fetchJson, sendJson } from "@/lib/client/fetcher";
import type { FindingRuleDto } from "@/lib/work-list/rules";

export function FindingRules() {
  const { data, mutate } = useSWR("/api/work-list/rules", (u: string) => fetchJson<{ rules: FindingRuleDto[] }>(u));
  const [name, setName] = useState("");
  const [to, setTo] = useState("");
  const [problem, setProblem] = useState<string | null>(null);
  const add = async () => {
    setProblem(null);
    try {
      await sendJson("/api/work-list/rules", "POST", { name: name.trim(), recipients: to.split(/[,\s]+/).filter(Boolean) });
      setName("");
      setTo("");
      await mutate();
    } catch (e) {
      setProblem(e instanceof Error ? e.message : String(e));
    }
  };
  const remove = async (id: number) => {
    await sendJson(`/api/work-list/rules/${id}`, "DELETE");
    await mutate();
  };
  return (
    <section className="flex flex-col gap-2 rounded-md border border-line bg-surface p-3" aria-label="E-mail rules for findings">
      <h2 className="text-base font-semibold">E-mail when a finding opens an item</h2>
      <ul className="text-sm">
        {(data?.rules ?? []).map((r) => (
          <li key={r.id} className="flex items-center gap-2">
            <span>{r.name}</span>
            <span className="text-muted">{r.recipients.join(", ")}</span>
            <button type="button" className="text-xs text-accent hover:underline" onClick={() => void remove(r.id)}>remove</button>
          </li>
        ))}
        {data && data.rules.length === 0 && <li className="text-muted">No rules: nobody is mailed.</li>}
      </ul>
      <div className="flex flex-wrap items-end gap-2 text-sm">
        <label className="flex flex-col">
          name
          <input className="rounded border border-line bg-raised px-2 py-1" value={name} maxLength={200} onChange={(e) => setName(e.target.value)} />
        </label>
        <label className="flex flex-col">
          recipients (comma-separated)
          <input className="w-72 rounded border border-line bg-raised px-2 py-1" value={to} onChange={(e) => setTo(e.target.value)} />
        </label>
        <button type="button" className="rounded border border-line px-3 py-1 hover:bg-raised" disabled={!name.trim() || !to.trim()} onClick={() => void add()}>
          add rule
        </button>
      </div>
      {problem && <p role="alert" className="text-sm">{problem}</p>}
    </section>
  );
}
