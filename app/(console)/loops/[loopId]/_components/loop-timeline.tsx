"use client";
/**
 * The loop's timeline beside its trends: alarm events and acknowledgements, operator notes,
 * configuration and tuning changes, tracker-state changes, newest first in one scrolling list.
 * Operators and above add a note here (append-only; a correction is a new note).
 */
import { useState } from "react";
import useSWR from "swr";
import type { Role } from "@/lib/domain/types";
import { roleAtLeast } from "@/lib/domain/types";
import { fetchJson, sendJson } from "@/lib/client/fetcher";
import { fmtTime } from "@/lib/client/format";
import type { TimelineItem, TimelineKind } from "@/lib/reports/timeline";

const KIND_WORD: Record<TimelineKind, string> = { alarm: "alarm", note: "note", config: "change", state: "state" };

/** A small outlined glyph per kind, so the kind reads by shape as well as by word. */
function KindGlyph({ kind }: { kind: TimelineKind }) {
  const common = { fill: "none", stroke: "currentColor", strokeWidth: 1.2 };
  return (
    <svg aria-hidden="true" width="12" height="12" viewBox="0 0 12 12" className="mt-0.5 shrink-0 text-muted">
      {kind === "alarm" && <path d="M6 1.5 L10.5 10 H1.5 Z" {...common} />}
      {kind === "note" && <path d="M2 1.5 H8 L10 3.5 V10.5 H2 Z M4 5 H8 M4 7.5 H8" {...common} />}
      {kind === "config" && <path d="M1.5 3.5 H10.5 M1.5 8.5 H10.5 M4 2 V5 M8 7 V10" {...common} />}
      {kind === "state" && <circle cx="6" cy="6" r="4" {...common} />}
    </svg>
  );
}

export function LoopTimeline({ loopId, role }: { loopId: number; role: Role }) {
  const { data, error, isLoading, mutate } = useSWR<{ items: TimelineItem[] }>(`/api/loops/${loopId}/timeline`, fetchJson, { refreshInterval: 15_000 });
  const [text, setText] = useState("");
  const [busy, setBusy] = useState(false);
  const [fail, setFail] = useState<string | null>(null);
  // The form opens on demand, so the list keeps the panel's room beside the trends.
  const [writing, setWriting] = useState(false);
  const canWrite = roleAtLeast(role, "operator");

  async function submit(e: React.FormEvent) {
    e.preventDefault();
    setBusy(true);
    setFail(null);
    try {
      await sendJson("/api/notes", "POST", { kind: "loop", loopId, text });
      setText("");
      setWriting(false);
      await mutate();
    } catch (err) {
      setFail((err as Error).message);
    } finally {
      setBusy(false);
    }
  }

  return (
    // Wide screens: sized by its grid row (the trends' height less the z-plane; at least 10rem for
    // the heading, the note form and a row or two), never by its items (contain: size), so the
    // list scrolls inside instead of stretching the page.
    <section className="flex min-h-0 flex-col gap-2 rounded-md border border-line bg-surface p-2 xl:min-h-40 xl:[contain:size]" aria-label="Timeline" data-testid="loop-timeline-panel">
      <div className="flex items-baseline justify-between gap-2">
        <h2 className="font-semibold">
          Timeline <span className="text-sm font-normal text-muted">last 7 days</span>
        </h2>
        {canWrite && !writing && (
          <button type="button" className="rounded border border-line px-2 py-0.5 text-xs" onClick={() => setWriting(true)}>
            Write a note
          </button>
        )}
      </div>
      {canWrite && writing && (
        <form onSubmit={submit} className="flex flex-col gap-1">
          <label className="text-xs text-muted" htmlFor={`note-${loopId}`}>
            Note on this loop
          </label>
          <textarea
            id={`note-${loopId}`}
            value={text}
            onChange={(e) => setText(e.target.value)}
            maxLength={2000}
            rows={2}
            autoFocus
            className="rounded border border-line bg-ground px-2 py-1 text-sm"
          />
          <div className="flex items-center gap-2">
            <button type="submit" disabled={busy || !text.trim()} className="rounded border border-line px-2 py-0.5 text-sm disabled:opacity-50">
              Add note
            </button>
            <button type="button" className="text-xs text-muted underline" onClick={() => setWriting(false)}>
              cancel
            </button>
            {fail && <span role="alert" className="text-xs text-urgent">{fail}</span>}
          </div>
        </form>
      )}
      {error && <p className="text-sm text-urgent">Could not load the timeline: {(error as Error).message}</p>}
      {isLoading && <p className="text-sm text-muted">Loading…</p>}
      {data && data.items.length === 0 && <p className="text-sm text-muted">Nothing happened on this loop in the last 7 days.</p>}
      <ol className="max-h-[420px] min-h-0 divide-y divide-line overflow-y-auto text-sm xl:max-h-none xl:flex-1" data-testid="loop-timeline">
        {data?.items.map((i, k) => (
          <li key={`${i.kind}-${i.refId ?? k}-${i.at}`} className="flex gap-2 py-1.5">
            <KindGlyph kind={i.kind} />
            <div className="min-w-0">
              <div className="flex flex-wrap gap-x-2">
                <span className="text-xs uppercase tracking-wide text-muted">{KIND_WORD[i.kind]}</span>
                <span>{i.title}</span>
                {i.repeats && i.repeats > 1 && (
                  <span className="text-xs text-muted" title={i.firstAt ? `first at ${fmtTime(i.firstAt)}` : undefined}>
                    ×{i.repeats}
                    {i.firstAt ? ` since ${fmtTime(i.firstAt)}` : ""}
                  </span>
                )}
              </div>
              {i.detail && <p className="whitespace-pre-wrap break-words text-muted">{i.detail}</p>}
              <p className="num font-mono text-xs text-muted">
                {fmtTime(i.at)}
                {i.who ? ` · ${i.who}` : ""}
              </p>
            </div>
          </li>
        ))}
      </ol>
    </section>
  );
}
