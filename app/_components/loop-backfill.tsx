"use client";
/**
 * Upload of a historian export for one loop, with a progress bar (bytes read, samples per
 * second, time left), cancel, the counted rejections with their lines, and the loop's earlier
 * backfills. The file is sent as the request body (text/csv) and read by the server as it arrives.
 */
import { useEffect, useRef, useState } from "react";
import useSWR from "swr";
import type { BackfillProgress, BackfillRow } from "@/lib/backfill/types";
import { ApiError, fetchJson, sendJson } from "@/lib/client/fetcher";
import { fmtTime } from "@/lib/client/format";
import { TableHead } from "@/app/_components/table-head";

const fmtS = (s: number | null) => (s === null ? "—" : s < 90 ? `${Math.round(s)} s` : `${Math.round(s / 60)} min`);
const fmtBytes = (n: number) => (n >= 1e6 ? `${(n / 1e6).toFixed(1)} MB` : `${Math.round(n / 1e3)} kB`);

export function LoopBackfill({ loopId }: { loopId: number }) {
  const base = `/api/loops/${loopId}/backfills`;
  const { data, mutate } = useSWR(base, (u: string) => fetchJson<{ running: BackfillProgress | null; recorded: BackfillRow[] }>(u), { refreshInterval: (d) => (d?.running ? 1000 : 15_000) });
  const [file, setFile] = useState<File | null>(null);
  const [replace, setReplace] = useState(false);
  const [busy, setBusy] = useState(false);
  const [result, setResult] = useState<BackfillProgress | null>(null);
  const [error, setError] = useState<string | null>(null);
  const poll = useRef<ReturnType<typeof setInterval> | null>(null);
  useEffect(() => () => void (poll.current && clearInterval(poll.current)), []);

  async function start() {
    if (!file) return;
    setBusy(true);
    setError(null);
    setResult(null);
    poll.current = setInterval(() => void mutate(), 1000);
    try {
      const res = await fetch(`${base}?file=${encodeURIComponent(file.name)}&replace=${replace ? 1 : 0}`, { method: "POST", credentials: "same-origin", headers: { "content-type": "text/csv", accept: "application/json" }, body: file });
      const body = (await res.json()) as { backfill?: BackfillProgress; error?: string };
      if (body.backfill) setResult(body.backfill);
      if (!res.ok && !body.backfill) setError(body.error ?? `Upload failed (${res.status}).`);
    } catch (e) {
      setError((e as Error).message);
    } finally {
      if (poll.current) clearInterval(poll.current);
      setBusy(false);
      void mutate();
    }
  }

  async function cancel(id: number) {
    try {
      await sendJson(`${base}/${id}`, "DELETE");
    } catch (e) {
      setError(e instanceof ApiError ? e.message : String(e));
    }
    void mutate();
  }

  const running = data?.running ?? null;
  const shown = running ?? result;
  const pct = shown && shown.totalBytes ? Math.min(100, (100 * shown.bytesRead) / shown.totalBytes) : null;
  return (
    <section className="flex flex-col gap-3 rounded-md border border-line bg-surface p-3" aria-label="Historian backfill" data-testid="loop-backfill">
      <div className="flex flex-wrap items-end gap-3">
        <label className="flex flex-col gap-1 text-sm">
          <span>Historian export (CSV)</span>
          <input type="file" accept=".csv,text/csv" disabled={busy} onChange={(e) => setFile(e.target.files?.[0] ?? null)} />
        </label>
        <label className="flex items-center gap-1 text-sm">
          <input type="checkbox" checked={replace} disabled={busy} onChange={(e) => setReplace(e.target.checked)} />
          replace the live model with one learnt from this file
        </label>
        <button type="button" className="rounded border border-line px-3 py-1 text-sm disabled:opacity-50" disabled={!file || busy || !!running} onClick={() => void start()}>
          Start backfill
        </button>
      </div>
      {error && <p className="text-sm text-urgent">{error}</p>}
      {shown && (
        <div className="flex flex-col gap-1 text-sm" data-testid="backfill-progress">
          <div className="h-2 w-full overflow-hidden rounded bg-canvas" role="progressbar" aria-valuemin={0} aria-valuemax={100} aria-valuenow={pct ?? undefined}>
            <div className="h-full bg-ink" style={{ width: `${pct ?? (shown.status === "running" ? 5 : 100)}%` }} />
          </div>
          <p className="num font-mono text-xs">
            {shown.status} · {fmtBytes(shown.bytesRead)}
            {shown.totalBytes ? ` of ${fmtBytes(shown.totalBytes)}` : ""} · {shown.accepted} accepted ({shown.minuteOnly} to 1-minute history only) · {shown.rejected} refused ·{" "}
            {Math.round(shown.samplesPerS)} samples/s · time left {fmtS(shown.etaS)}
            {shown.fromT !== null && shown.toT !== null ? ` · ${fmtTime(new Date(shown.fromT).toISOString())} – ${fmtTime(new Date(shown.toT).toISOString())}` : ""}
          </p>
          {shown.status === "running" && (
            <div>
              <button type="button" className="rounded border border-line px-3 py-1 text-sm" onClick={() => void cancel(shown.id)}>
                Cancel
              </button>
            </div>
          )}
          {shown.message && <p className="text-muted">{shown.message}</p>}
          {shown.trained && <p>The loop&apos;s tracker learnt from the backfill and continues with live telemetry.</p>}
          {shown.firstRejections.length > 0 && (
            <details>
              <summary>Refused samples by reason: {Object.entries(shown.rejections).map(([r, n]) => `${r} ${n}`).join(", ")}</summary>
              <ul className="max-h-48 overflow-y-auto font-mono text-xs">
                {shown.firstRejections.map((r, i) => (
                  <li key={i}>
                    line {r.line}: {r.reason} — {r.detail}
                  </li>
                ))}
              </ul>
            </details>
          )}
        </div>
      )}
      {data && data.recorded.length > 0 && (
        <table className="w-full text-xs">
          <TableHead columns={["started", "file", "status", "span", "accepted / refused", "model"]} />
          <tbody>
            {data.recorded.map((r) => (
              <tr key={r.id} className="border-b border-line/50">
                <td className="num py-1 pr-2 font-mono">{fmtTime(r.startedAt)}</td>
                <td className="py-1 pr-2">{r.fileName}</td>
                <td className="py-1 pr-2">{r.status}</td>
                <td className="num py-1 pr-2 font-mono">{r.fromT !== null && r.toT !== null ? `${fmtTime(new Date(r.fromT).toISOString())} – ${fmtTime(new Date(r.toT).toISOString())}` : "—"}</td>
                <td className="num py-1 pr-2 font-mono">
                  {r.accepted} / {r.rejected}
                </td>
                <td className="py-1">{r.trained ? "trained" : "history only"}</td>
              </tr>
            ))}
          </tbody>
        </table>
      )}
    </section>
  );
}
