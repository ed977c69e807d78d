"use client";
/** Upload form, list of the loop's assessed historian exports, and the selected assessment. */
import { useState } from "react";
import useSWR from "swr";
import { ReportEvidence } from "@/app/_components/finding-evidence";
import { FindingMark } from "@/app/_components/finding-mark";
import { CsvUploadForm } from "@/app/_components/csv-upload-form";
import { fetchJson } from "@/lib/client/fetcher";
import { fmtSeconds, fmtTime } from "@/lib/client/format";
import type { ExportAssessmentDetail, ExportAssessmentSummary } from "@/lib/export-assessments/service";

export function ExportsView({ loopId, canUpload, initial, initialSelected }: { loopId: number; canUpload: boolean; initial: ExportAssessmentSummary[]; initialSelected: number | null }) {
  const base = `/api/loops/${loopId}/exports`;
  const list = useSWR(base, (u: string) => fetchJson<{ exports: ExportAssessmentSummary[] }>(u), { fallbackData: { exports: initial } });
  const [selected, setSelected] = useState<number | null>(initialSelected);
  const detail = useSWR(selected ? `${base}/${selected}` : null, (u: string) => fetchJson<{ export: ExportAssessmentDetail }>(u));
  const rows = list.data?.exports ?? [];
  const d = detail.data?.export ?? null;
  return (
    <div className="flex flex-col gap-4">
      {canUpload && (
        <CsvUploadForm
          action={base}
          title="Upload an export"
          testId="export-upload"
          resultKey="export"
          submitLabel="Upload and assess"
          busyLabel="Assessing…"
          note={
            <>
              CSV with a header line: <span className="font-mono">t, sp, pv, mv</span> and optionally <span className="font-mono">mode</span> (also read:{" "}
              <span className="font-mono">time</span>, <span className="font-mono">setpoint</span>, <span className="font-mono">op</span>/<span className="font-mono">out</span>). Time in seconds, days (
              <span className="font-mono">t [d]</span>) or ISO 8601; comma or semicolon separated.
            </>
          }
          onDone={async (id) => {
            await list.mutate();
            setSelected(id);
          }}
        />
      )}
      <section className="rounded-md border border-line bg-surface p-3" aria-labelledby="ex-list">
        <h2 id="ex-list" className="mb-2 font-semibold">
          Assessed exports
        </h2>
        {rows.length === 0 ? (
          <p className="text-sm text-muted">No export has been assessed for this loop yet.</p>
        ) : (
          <table className="w-full text-sm" data-testid="export-list">
            <thead className="text-left text-muted">
              <tr>
                <th className="py-1 pr-3 font-normal">Uploaded</th>
                <th className="pr-3 font-normal">File</th>
                <th className="pr-3 font-normal">Covers (UTC)</th>
                <th className="pr-3 text-right font-normal">Rows</th>
                <th className="pr-3 text-right font-normal">Span</th>
                <th className="pr-3 font-normal">Finding</th>
                <th className="font-normal">By</th>
              </tr>
            </thead>
            <tbody>
              {rows.map((t) => (
                <tr key={t.id} className={`border-t border-line ${t.id === selected ? "bg-raised" : ""}`}>
                  <td className="py-1 pr-3">
                    <button type="button" className="text-accent underline" aria-pressed={t.id === selected} onClick={() => setSelected(t.id)}>
                      {fmtTime(t.createdAt)}
                    </button>
                  </td>
                  <td className="pr-3 font-mono">
                    <a href={`${base}/${t.id}/data`} download className="hover:underline" title="The uploaded file, as it was">
                      {t.filename}
                    </a>
                  </td>
                  <td className="pr-3">{t.startsAt && t.endsAt ? `${t.startsAt.slice(0, 16).replace("T", " ")} – ${t.endsAt.slice(0, 16).replace("T", " ")}` : "times relative"}</td>
                  <td className="num pr-3 text-right">{t.rowCount}</td>
                  <td className="num pr-3 text-right">{fmtSeconds(t.spanS)}</td>
                  <td className="pr-3">
                    <FindingMark finding={{ label: t.label, confidence: t.confidence, needsS: null }} /> <span className="num text-xs text-muted">{t.confidence.toFixed(2)}</span>
                  </td>
                  <td>{t.uploadedBy ?? "–"}</td>
                </tr>
              ))}
            </tbody>
          </table>
        )}
      </section>
      {selected && detail.error && <p role="alert" className="text-urgent">{String((detail.error as Error).message)}</p>}
      {d && (
        <ReportEvidence
          key={d.id}
          title={`Assessment of ${d.filename}`}
          finding={{ label: d.report.diagnosis.label, confidence: d.report.diagnosis.confidence, needsS: d.report.diagnosis.needsS ?? null, reason: d.report.diagnosis.reason ?? null, evidence: d.report.diagnosis.evidence }}
          meta={`confidence ${d.confidence.toFixed(2)} · ${d.rowCount} rows over ${fmtSeconds(d.spanS)}`}
          report={d.report}
          pts={d.pvMv}
          shared={null}
        />
      )}
    </div>
  );
}
