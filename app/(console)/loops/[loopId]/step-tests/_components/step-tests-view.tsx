"use client";
/** Upload form, list of the loop's step tests, and the selected result. */
import { useRouter } from "next/navigation";
import { useState } from "react";
import useSWR from "swr";
import { CsvUploadForm } from "@/app/_components/csv-upload-form";
import { fetchJson } from "@/lib/client/fetcher";
import { fmt, fmtSeconds, fmtTime } from "@/lib/client/format";
import type { StepTestDetail, StepTestSummary } from "@/lib/step-tests/service";
import { StepTestResultView, type LoopInfo } from "./step-test-result";

export function StepTestsView({
  loopId,
  canUpload,
  initial,
  initialSelected,
  loop,
}: {
  loopId: number;
  canUpload: boolean;
  initial: StepTestSummary[];
  initialSelected: number | null;
  loop: LoopInfo;
}) {
  const router = useRouter();
  const base = `/api/loops/${loopId}/step-tests`;
  const list = useSWR(base, (u: string) => fetchJson<{ stepTests: StepTestSummary[] }>(u), { fallbackData: { stepTests: initial } });
  const [selected, setSelected] = useState<number | null>(initialSelected);
  const detail = useSWR(selected ? `${base}/${selected}` : null, (u: string) => fetchJson<{ stepTest: StepTestDetail }>(u));
  const tests = list.data?.stepTests ?? [];

  return (
    <div className="flex flex-col gap-4">
      {canUpload && (
        <CsvUploadForm
          action={base}
          title="Upload a step test"
          testId="step-test-upload"
          resultKey="stepTest"
          submitLabel="Upload and analyse"
          busyLabel="Analysing…"
          note={
            <>
              CSV with a header line: <span className="font-mono">t, mv, pv</span> and optionally <span className="font-mono">sp, mode</span>. Time in
              seconds or ISO 8601 with a zone; a unit in brackets is checked against the loop (e.g. <span className="font-mono">pv [degC]</span>). At most 5 MB.
            </>
          }
          fields={
            <>
              <label className="flex flex-col gap-0.5 text-sm">
                Operating point
                <select name="detrend" defaultValue="initial" className="rounded border border-line bg-ground px-2 py-1">
                  <option value="initial">settled before the first move</option>
                  <option value="mean">record mean</option>
                  <option value="linear">remove a straight-line drift</option>
                </select>
              </label>
              <label className="flex flex-col gap-0.5 text-sm">
                Longest dead time to search (s, optional)
                <input name="maxDeadTimeS" type="number" min="0" step="any" className="num w-40 rounded border border-line bg-ground px-2 py-1" />
              </label>
            </>
          }
          onDone={async (id) => {
            await list.mutate();
            setSelected(id);
            router.refresh();
          }}
        />
      )}
      <section className="rounded-md border border-line bg-surface p-3" aria-labelledby="st-list">
        <h2 id="st-list" className="mb-2 font-semibold">
          Uploaded tests
        </h2>
        {tests.length === 0 ? (
          <p className="text-sm text-muted">No step test has been uploaded for this loop yet.</p>
        ) : (
          <table className="w-full text-sm" data-testid="step-test-list">
            <thead className="text-left text-muted">
              <tr>
                <th className="py-1 pr-3 font-normal">Uploaded</th>
                <th className="pr-3 font-normal">File</th>
                <th className="pr-3 text-right font-normal">Rows</th>
                <th className="pr-3 text-right font-normal">Fit</th>
                <th className="pr-3 text-right font-normal">Gain (%/%)</th>
                <th className="pr-3 text-right font-normal">Time constant</th>
                <th className="pr-3 text-right font-normal">Dead time</th>
                <th className="text-right font-normal">Proposed period</th>
              </tr>
            </thead>
            <tbody>
              {tests.map((t) => (
                <tr key={t.id} className={`border-t border-line ${t.id === selected ? "bg-raised" : ""}`}>
                  <td className="py-1 pr-3">
                    <button type="button" className="text-accent underline" aria-pressed={t.id === selected} onClick={() => setSelected(t.id)}>
                      {fmtTime(t.createdAt)}
                    </button>
                  </td>
                  <td className="pr-3 font-mono">{t.filename}</td>
                  <td className="num pr-3 text-right">{t.rowCount}</td>
                  <td className="num pr-3 text-right">{fmt(t.fitPercent, 1)} %</td>
                  <td className="num pr-3 text-right">{fmt(t.gainPercent, 2)}</td>
                  <td className="num pr-3 text-right">{fmtSeconds(t.timeConstantS)}</td>
                  <td className="num pr-3 text-right">{fmtSeconds(t.deadTimeS)}</td>
                  <td className="num text-right">{fmtSeconds(t.proposedPeriodS)}</td>
                </tr>
              ))}
            </tbody>
          </table>
        )}
      </section>
      {selected && detail.error && <p role="alert" className="text-urgent">{String((detail.error as Error).message)}</p>}
      {selected && detail.data && (
        <StepTestResultView
          key={detail.data.stepTest.id}
          loopId={loopId}
          detail={detail.data.stepTest}
          loop={loop}
          canApply={canUpload}
          onApplied={() => void detail.mutate()}
        />
      )}
    </div>
  );
}
