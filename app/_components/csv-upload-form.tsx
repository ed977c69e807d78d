"use client";
/**
 * A CSV upload form that posts `file` (and any extra fields given as children) as multipart to a
 * route and reports the first problem the route names ("At line 12, column 3 (pv): ...", nothing
 * stored). Step tests and assessed historian exports use it.
 */
import { useState, useSyncExternalStore, type ReactNode } from "react";
import { ApiError } from "@/lib/client/fetcher";

export function CsvUploadForm({
  action,
  title,
  note,
  fields,
  submitLabel,
  busyLabel,
  testId,
  resultKey,
  onDone,
}: {
  action: string;
  title: string;
  /** What the file must hold, under the title. */
  note: ReactNode;
  /** Form fields beside the file input. */
  fields?: ReactNode;
  submitLabel: string;
  busyLabel: string;
  testId: string;
  /** Key of the created object in the route's 201 body (its `id` is handed to onDone). */
  resultKey: string;
  onDone: (id: number) => Promise<void>;
}) {
  const [busy, setBusy] = useState(false);
  const ready = useSyncExternalStore(noSubscribe, () => true, () => false);
  const [error, setError] = useState<{ message: string; where: string | null } | null>(null);
  async function submit(e: React.FormEvent<HTMLFormElement>) {
    e.preventDefault();
    const form = e.currentTarget;
    const data = new FormData(form);
    const file = data.get("file");
    if (!(file instanceof File) || file.size === 0) {
      setError({ message: "Choose a CSV file first.", where: null });
      return;
    }
    setBusy(true);
    setError(null);
    try {
      const res = await fetch(action, { method: "POST", body: data, credentials: "same-origin" });
      const body = (await res.json().catch(() => ({}))) as { error?: string; details?: { row?: number; column?: number | null; columnName?: string | null } } & Record<string, unknown>;
      if (!res.ok) {
        const d = body.details;
        const where = d?.row ? `line ${d.row}${d.column ? `, column ${d.column}` : ""}${d.columnName ? ` (${d.columnName})` : ""}` : null;
        throw new ApiError(res.status, body.error ?? `Upload failed (${res.status}).`, where);
      }
      form.reset();
      await onDone((body[resultKey] as { id: number }).id);
    } catch (err) {
      setError({ message: err instanceof Error ? err.message : String(err), where: err instanceof ApiError ? (err.details as string | null) : null });
    } finally {
      setBusy(false);
    }
  }
  return (
    <form onSubmit={submit} className="flex flex-col gap-2 rounded-md border border-line bg-surface p-3" data-testid={testId}>
      <h2 className="font-semibold">{title}</h2>
      <p className="text-xs text-muted">{note}</p>
      <div className="flex flex-wrap items-end gap-3">
        <label className="flex flex-col gap-0.5 text-sm">
          File
          <input name="file" type="file" accept=".csv,text/csv" required className="text-sm" />
        </label>
        {fields}
        <button type="submit" disabled={busy || !ready} className="rounded bg-accent px-4 py-1.5 font-semibold text-accent-ink disabled:opacity-60">
          {busy ? busyLabel : submitLabel}
        </button>
      </div>
      {error && (
        <p role="alert" className="text-sm text-urgent" data-testid={`${testId}-error`}>
          {error.where && !/^Lines? \d/.test(error.message) && <strong className="mr-1">At {error.where}:</strong>}
          {error.message} Nothing was stored.
        </p>
      )}
    </form>
  );
}

/** False during server rendering and hydration: until then a click would submit a form natively. */
const noSubscribe = () => () => {};
