"use client";
/**
 * Loop inventory import and export (engineer): choose a CSV, preview it (every problem with its
 * line, the loops with the defaults their kind filled in), then save all of them with a reason —
 * or none. The export downloads the inventory in the same format.
 */
import { useState } from "react";
import type { ImportResult } from "@/lib/data/admin/loop-import";
import { INVENTORY_COLUMNS } from "@/lib/admin/inventory-csv-columns";
import { inventoryFileText } from "@/lib/admin/inventory-file";
import { MAX_INVENTORY_BYTES } from "@/lib/admin/inventory-limits";
import { ApiError, sendJson } from "@/lib/client/fetcher";
import { TableHead } from "@/app/_components/table-head";

export function AdminLoopImport() {
  const [csv, setCsv] = useState<string | null>(null);
  const [fileName, setFileName] = useState("");
  const [result, setResult] = useState<ImportResult | null>(null);
  const [reason, setReason] = useState("");
  const [moc, setMoc] = useState("");
  const [busy, setBusy] = useState(false);
  const [message, setMessage] = useState<{ tone: "ok" | "error"; text: string } | null>(null);

  async function choose(file: File | undefined) {
    setResult(null);
    setMessage(null);
    if (!file) return setCsv(null);
    if (file.size > MAX_INVENTORY_BYTES) {
      setCsv(null);
      return setMessage({ tone: "error", text: `The file is larger than ${MAX_INVENTORY_BYTES / 1024 / 1024} MiB.` });
    }
    setFileName(file.name);
    setCsv(await inventoryFileText(file));
  }

  async function run(commit: boolean) {
    if (csv === null) return;
    setBusy(true);
    setMessage(null);
    try {
      const out = await sendJson<ImportResult>("/api/admin/loop-inventory", "POST", commit ? { csv, commit, reason, mocReference: moc || null } : { csv, commit });
      setResult(out);
      if (commit) {
        setMessage({ tone: "ok", text: `${out.created?.length ?? 0} loops created and logged.` });
        setCsv(null);
      }
    } catch (e) {
      const issues = e instanceof ApiError ? (e.details as { issues?: ImportResult["issues"] } | undefined)?.issues : undefined;
      if (issues) setResult({ ok: false, rows: [], issues });
      setMessage({ tone: "error", text: (e as Error).message });
    } finally {
      setBusy(false);
    }
  }

  return (
    <section className="flex flex-col gap-3 rounded-md border border-line bg-surface p-3" aria-label="Loop inventory" data-testid="loop-import">
      <div className="flex flex-wrap items-center justify-between gap-2">
        <h2 className="font-semibold">Loop inventory</h2>
        <a className="rounded border border-line px-3 py-1 text-sm hover:bg-canvas" href="/api/admin/loop-inventory" download>
          Export CSV
        </a>
      </div>
      <p className="text-sm text-muted">
        One loop per row. Columns: <span className="font-mono text-xs">{INVENTORY_COLUMNS.map((c) => c.name).join(", ")}</span>. Only tag, site and kind are
        required; a blank cell takes the kind&apos;s default, listed in the preview before anything is saved. The tuning recorded here documents the live
        controller; Rimguard never writes to it.
      </p>
      <label className="flex flex-col gap-1 text-sm">
        <span>Inventory file (CSV)</span>
        <input type="file" accept=".csv,text/csv" onChange={(e) => void choose(e.target.files?.[0])} data-testid="loop-import-file" />
      </label>
      <div>
        <button type="button" className="rounded border border-line px-3 py-1 text-sm disabled:opacity-50" disabled={csv === null || busy} onClick={() => void run(false)}>
          Preview {fileName && csv !== null ? fileName : ""}
        </button>
      </div>
      {message && (
        <p role="status" className={`text-sm ${message.tone === "error" ? "text-urgent" : ""}`}>
          {message.text}
        </p>
      )}
      {result && result.issues.length > 0 && (
        <div>
          <h3 className="text-sm font-semibold">{result.issues.length} problem(s) — nothing can be saved until every one is fixed</h3>
          <ul className="max-h-64 overflow-y-auto font-mono text-xs" data-testid="loop-import-issues">
            {result.issues.map((i, n) => (
              <li key={n}>
                line {i.line}
                {i.column ? `, ${i.column}` : ""}: {i.message}
              </li>
            ))}
          </ul>
        </div>
      )}
      {result && result.rows.length > 0 && (
        <div className="overflow-x-auto">
          <h3 className="text-sm font-semibold">{result.created ? "Created" : "To be created"}: {result.rows.length} loops</h3>
          <table className="w-full text-xs">
            <TableHead columns={["line", "tag", "site / area", "kind", "tuning", "periods (s)", "defaults applied"]} />
            <tbody>
              {result.rows.map((r) => (
                <tr key={r.line} className="border-b border-line/50 align-top">
                  <td className="num py-1 pr-2 font-mono">{r.line}</td>
                  <td className="py-1 pr-2">{r.loop.tag}</td>
                  <td className="py-1 pr-2">
                    {r.site}
                    {r.area ? ` / ${r.area}` : ""}
                  </td>
                  <td className="py-1 pr-2">{r.loop.kind}</td>
                  <td className="py-1 pr-2 font-mono">
                    {r.loop.gainKind === "pb" ? `PB ${r.loop.gainValue} %` : `Kc ${r.loop.gainValue}`}, Ti {r.loop.tiValue ?? "none"} {r.loop.tiUnits}
                  </td>
                  <td className="py-1 pr-2 font-mono">
                    {r.loop.telemetryPeriodS} / {r.loop.controllerPeriodS} / {r.loop.estimationPeriodS}
                  </td>
                  <td className="py-1 text-muted">{r.defaulted.join(", ") || "—"}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
      {result?.ok && !result.created && csv !== null && (
        <div className="flex flex-wrap items-end gap-2">
          <label className="flex flex-col gap-1 text-sm">
            <span>Change reason</span>
            <input className="rounded border border-line px-2 py-1" value={reason} onChange={(e) => setReason(e.target.value)} minLength={5} maxLength={1000} />
          </label>
          <label className="flex flex-col gap-1 text-sm">
            <span>MOC reference (optional)</span>
            <input className="rounded border border-line px-2 py-1" value={moc} onChange={(e) => setMoc(e.target.value)} maxLength={64} />
          </label>
          <button type="button" className="rounded border border-line bg-ink px-3 py-1 text-sm text-canvas disabled:opacity-50" disabled={busy || reason.trim().length < 5} onClick={() => void run(true)}>
            Save all {result.rows.length} loops
          </button>
        </div>
      )}
    </section>
  );
}
