"use client";
/**
 * The work list's engineering settings of the tenant: the level of the sluggish-tuning finding (the
 * tracked model's set-point response slower than this multiple of the loop's baseline time
 * constant). Engineers read it; admins change it with a reason (configuration change log).
 */
import { useState } from "react";
import useSWR from "swr";
import { fetchJson, sendJson } from "@/lib/client/fetcher";
import { fmtTime } from "@/lib/client/format";
import type { WorkListSettingsDto } from "@/lib/work-list/settings";

export function WorkListSettings({ mayEdit }: { mayEdit: boolean }) {
  const { data, mutate } = useSWR("/api/work-list/settings", (u: string) => fetchJson<{ settings: WorkListSettingsDto }>(u));
  const [multiple, setMultiple] = useState("");
  const [reason, setReason] = useState("");
  const [msg, setMsg] = useState<string | null>(null);
  const s = data?.settings;
  const save = async () => {
    setMsg(null);
    try {
      await sendJson("/api/work-list/settings", "PUT", { sluggishMultiple: Number(multiple), reason: reason.trim() });
      setMultiple("");
      setReason("");
      setMsg("Saved. Each loop's next verdict uses the new level.");
      await mutate();
    } catch (e) {
      setMsg(e instanceof Error ? e.message : String(e));
    }
  };
  return (
    <section className="flex flex-col gap-2 rounded-md border border-line bg-surface p-3" aria-label="Work-list settings">
      <h2 className="text-base font-semibold">Sluggish-tuning level</h2>
      <p className="text-sm text-muted">
        A loop is likely sluggishly tuned when its tracked model answers a set-point move with an average residence time above{" "}
        <span className="num" data-testid="worklist-sluggish-multiple">{s ? s.sluggishMultiple : "…"}</span>× its baseline closed-loop time constant
        (set per loop). This opens a work-list item; it never raises an operator alarm.
        {s && (s.isDefault ? " (default)" : ` Set by ${s.updatedBy ?? "an admin"}${s.updatedAt ? ` at ${fmtTime(s.updatedAt)}` : ""}.`)}
      </p>
      {mayEdit && (
        <div className="flex flex-wrap items-end gap-2 text-sm">
          <label className="flex flex-col">
            multiple of the baseline (above 1, at most 100)
            <input
              type="number"
              step="any"
              min={1}
              max={100}
              className="num w-28 rounded border border-line bg-raised px-2 py-1"
              value={multiple}
              onChange={(e) => setMultiple(e.target.value)}
              data-testid="worklist-sluggish-input"
            />
          </label>
          <label className="flex flex-col">
            reason for the change
            <input className="w-72 rounded border border-line bg-raised px-2 py-1" value={reason} maxLength={2000} onChange={(e) => setReason(e.target.value)} />
          </label>
          <button
            type="button"
            className="rounded border border-line px-3 py-1 hover:bg-raised"
            disabled={!multiple.trim() || !reason.trim()}
            onClick={() => void save()}
          >
            save
          </button>
        </div>
      )}
      {msg && <p role="status" className="text-sm">{msg}</p>}
    </section>
  );
}
