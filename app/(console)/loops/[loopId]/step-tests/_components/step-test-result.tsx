"use client";
/** One step test's result: chart, identified model, continuous equivalents, proposal and apply form. */
import { useState, useSyncExternalStore } from "react";
import { sendJson } from "@/lib/client/fetcher";
import { fmt, fmtSeconds } from "@/lib/client/format";
import type { StepTestDetail } from "@/lib/step-tests/service";
import { StepTestChart } from "./step-test-chart";
import { right, TableHead } from "@/app/_components/table-head";

export interface LoopInfo {
  tag: string;
  units: string;
  mvUnits: string;
  pvLo: number;
  pvHi: number;
  mvLo: number;
  mvHi: number;
}

const cell = "num py-0.5 pr-3 text-right";

export function StepTestResultView({
  loopId,
  detail,
  loop,
  canApply,
  onApplied,
}: {
  loopId: number;
  detail: StepTestDetail;
  loop: LoopInfo;
  canApply: boolean;
  onApplied: () => void;
}) {
  const r = detail.result;
  if (!r) return <p className="text-sm text-muted">This test has no result.</p>;
  const m = r.identification.model;
  const c = r.continuous;
  const best = [...r.identification.candidates].filter((x) => !x.error).sort((a, b) => a.criterionValue - b.criterionValue).slice(0, 8);
  return (
    <section className="flex flex-col gap-3 rounded-md border border-line bg-surface p-3" aria-labelledby="st-result" data-testid="step-test-result">
      <div className="flex flex-wrap items-baseline gap-3">
        <h2 id="st-result" className="font-semibold">
          {detail.filename}
        </h2>
        <span className="text-sm text-muted">
          {r.data.rows} rows every {fmtSeconds(r.data.periodS)} over {fmtSeconds(r.data.durationS)}
          {r.data.startTime ? ` from ${r.data.startTime}` : ""}; {r.data.closedLoop ? "closed loop (auto)" : "open loop (manual)"}
        </span>
        <a href={`/api/loops/${loopId}/step-tests/${detail.id}/data`} className="text-sm text-accent underline">
          download the original file
        </a>
      </div>
      {r.warnings.length > 0 && (
        <ul className="list-disc pl-5 text-sm text-high" aria-label="Warnings">
          {r.warnings.map((w) => (
            <li key={w}>{w}</li>
          ))}
        </ul>
      )}
      <StepTestChart {...r.chart} units={loop.units} mvUnits={loop.mvUnits} ariaLabel={`${loop.tag}: measured and model PV of the step test`} />

      <div className="grid gap-4 md:grid-cols-2">
        <div>
          <h3 className="mb-1 text-sm font-semibold">Plant summary ({c.integrating ? "integrator plus dead time" : "first order plus dead time"})</h3>
          <dl className="grid grid-cols-[auto_1fr] gap-x-4 text-sm">
            {c.integrating ? (
              <>
                <dt className="text-muted">Ramp rate</dt>
                <dd className="num">
                  {fmt(c.rate, 5)} {loop.units}/s per {loop.mvUnits} · {fmt(c.ratePercent, 5)} %/s per % of span
                </dd>
              </>
            ) : (
              <>
                <dt className="text-muted">Gain</dt>
                <dd className="num">
                  {fmt(c.gain, 3)} {loop.units}/{loop.mvUnits} · {fmt(c.gainPercent, 3)} %/% of span
                </dd>
                <dt className="text-muted">Time constant</dt>
                <dd className="num">{fmtSeconds(c.timeConstantS)}</dd>
              </>
            )}
            <dt className="text-muted">Dead time</dt>
            <dd className="num">{fmtSeconds(c.deadTimeS)}</dd>
            <dt className="text-muted">Fit of this summary</dt>
            <dd className="num">{fmt(c.fopdtFitPercent, 1)} %</dd>
          </dl>
          <p className="mt-1 text-xs text-muted">{c.method}.</p>
        </div>
        <div>
          <h3 className="mb-1 text-sm font-semibold">
            ARX model at T = {fmtSeconds(r.identification.periodS)} (fit {fmt(r.identification.fitPercent, 1)} %)
          </h3>
          <p className="font-mono text-xs" data-testid="step-test-model">
            A(q) = 1 {m.a.map((a, i) => `${a < 0 ? "−" : "+"} ${Math.abs(a).toFixed(4)} q^-${i + 1}`).join(" ")}
            <br />
            B(q) = {m.b.map((b, i) => `${i === 0 ? (b < 0 ? "−" : "") : b < 0 ? " − " : " + "}${Math.abs(b).toFixed(4)}${i ? ` q^-${i}` : ""}`).join("")} , delay nk = {m.nk}
          </p>
          <table className="mt-2 text-sm">
            <caption className="text-left text-xs text-muted">Plant poles</caption>
            <TableHead columns={["z", "|z|", "time constant", "ζ", "ωn (rad/s)"].map(right)} theadClassName="text-muted" rowClassName="" cell="pr-3" lastCell="" />
            <tbody>
              {c.poles.map((p, i) => (
                <tr key={i}>
                  <td className={cell}>
                    {fmt(p.re, 4)}
                    {p.im ? ` ${p.im < 0 ? "−" : "+"} ${fmt(Math.abs(p.im), 4)}j` : ""}
                  </td>
                  <td className={cell}>{fmt(p.radius, 4)}</td>
                  <td className={cell}>{p.timeConstantS === null ? (p.kind === "negative-real" ? "rings at Nyquist" : "—") : fmtSeconds(p.timeConstantS)}</td>
                  <td className={cell}>{fmt(p.zeta, 3)}</td>
                  <td className="num text-right">{fmt(p.wn, 4)}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      </div>

      <details className="text-sm">
        <summary className="cursor-pointer">Structures compared ({r.identification.candidates.length}; best 8 by FPE)</summary>
        <table className="mt-1">
          <TableHead columns={["na", "nb", "nk", "FPE", "fit %"].map(right)} theadClassName="text-muted" rowClassName="" cell="pr-3" lastCell="" />
          <tbody>
            {best.map((x) => (
              <tr key={`${x.na}-${x.nb}-${x.nk}`} className={x.na === m.a.length && x.nb === m.b.length && x.nk === m.nk ? "font-semibold" : ""}>
                <td className={cell}>{x.na}</td>
                <td className={cell}>{x.nb}</td>
                <td className={cell}>{x.nk}</td>
                <td className={cell}>{x.criterionValue.toExponential(3)}</td>
                <td className="num text-right">{fmt(x.fit, 1)}</td>
              </tr>
            ))}
          </tbody>
        </table>
        <p className="text-xs text-muted">The chosen structure (bold) is the simplest within 2 % of the best FPE (parsimony, Ljung 1999).</p>
      </details>

      <Proposal loopId={loopId} detail={detail} canApply={canApply} onApplied={onApplied} />
    </section>
  );
}

function Proposal({ loopId, detail, canApply, onApplied }: { loopId: number; detail: StepTestDetail; canApply: boolean; onApplied: () => void }) {
  const p = detail.result?.proposal ?? null;
  const [reason, setReason] = useState("");
  const [moc, setMoc] = useState("");
  const [period, setPeriod] = useState(true);
  const [structure, setStructure] = useState(true);
  const [busy, setBusy] = useState(false);
  const [message, setMessage] = useState<{ ok: boolean; text: string } | null>(null);
  const ready = useHydrated();
  if (!p) return <p className="text-sm text-muted">No estimation period is proposed for this test (see the warnings).</p>;
  const cur = detail.loop;
  async function submit(e: React.FormEvent) {
    e.preventDefault();
    if (reason.trim().length < 3) {
      setMessage({ ok: false, text: "Give a reason (at least 3 characters)." });
      return;
    }
    const apply = [...(period ? ["estimationPeriod"] : []), ...(structure ? ["modelStructure"] : [])];
    if (apply.length === 0) {
      setMessage({ ok: false, text: "Choose what to apply." });
      return;
    }
    setBusy(true);
    setMessage(null);
    try {
      const res = await sendJson<{ changed: Record<string, unknown> }>(`/api/loops/${loopId}/step-tests/${detail.id}/apply`, "POST", {
        reason,
        mocReference: moc || undefined,
        apply,
      });
      const n = Object.keys(res.changed).length;
      setMessage({ ok: true, text: n ? `Applied and logged (${Object.keys(res.changed).join(", ")}).` : "Nothing to change: the loop already uses these settings." });
      setReason("");
      onApplied();
    } catch (err) {
      setMessage({ ok: false, text: err instanceof Error ? err.message : String(err) });
    } finally {
      setBusy(false);
    }
  }
  return (
    <div className="rounded border border-line p-3" data-testid="step-test-proposal">
      <h3 className="mb-1 font-semibold">Proposal for the live tracker</h3>
      <table className="text-sm">
        <thead className="text-muted">
          <tr>
            <th className="pr-4 text-left font-normal"></th>
            <th className="pr-4 text-right font-normal">now</th>
            <th className="text-right font-normal">proposed</th>
          </tr>
        </thead>
        <tbody>
          <tr>
            <td className="pr-4">Estimation period</td>
            <td className={cell}>{fmtSeconds(cur.estimationPeriodS)}</td>
            <td className="num text-right">
              {fmtSeconds(p.estimationPeriodS)} ({p.factor} × {fmtSeconds(p.telemetryPeriodS)})
            </td>
          </tr>
          <tr>
            <td className="pr-4">Model structure na, nb, nk</td>
            <td className={cell}>
              {cur.na}, {cur.nb}, {cur.nk}
            </td>
            <td className="num text-right">
              {p.modelStructure.na}, {p.modelStructure.nb}, {p.modelStructure.nk}
            </td>
          </tr>
        </tbody>
      </table>
      <p className="mt-1 text-xs text-muted">{p.reason}</p>
      {canApply ? (
        <form onSubmit={submit} className="mt-2 flex flex-col gap-2" noValidate>
          <fieldset className="flex flex-wrap gap-4 text-sm">
            <legend className="sr-only">What to apply</legend>
            <label className="flex items-center gap-1">
              <input type="checkbox" checked={period} onChange={(e) => setPeriod(e.target.checked)} /> estimation period
            </label>
            <label className="flex items-center gap-1">
              <input type="checkbox" checked={structure} onChange={(e) => setStructure(e.target.checked)} /> model structure
            </label>
          </fieldset>
          <label className="flex flex-col gap-0.5 text-sm">
            Reason (required, kept in the change log)
            <textarea value={reason} onChange={(e) => setReason(e.target.value)} required minLength={3} rows={2} className="rounded border border-line bg-ground px-2 py-1" />
          </label>
          <label className="flex flex-col gap-0.5 text-sm">
            Management-of-change reference (optional)
            <input value={moc} onChange={(e) => setMoc(e.target.value)} maxLength={100} className="w-64 rounded border border-line bg-ground px-2 py-1" />
          </label>
          <p role="note" className="text-xs text-muted" data-testid="step-test-caution">
            Advisory: this changes only Rimguard&apos;s own estimation settings for this loop. Rimguard never writes to a controller;
            any change to a live controller follows your site&apos;s management of change and is made by authorised personnel.
          </p>
          <div>
            <button type="submit" disabled={busy || !ready} className="rounded bg-accent px-4 py-1.5 font-semibold text-accent-ink disabled:opacity-60">
              {busy ? "Applying…" : "Apply to the tracker"}
            </button>
          </div>
          {message && (
            <p role={message.ok ? "status" : "alert"} className={`text-sm ${message.ok ? "text-ok" : "text-urgent"}`}>
              {message.text}
            </p>
          )}
        </form>
      ) : (
        <p className="mt-2 text-xs text-muted">An engineer can apply this proposal. Rimguard never writes to a controller.</p>
      )}
    </div>
  );
}

const noSubscribe = () => () => {};
/** False during server rendering and hydration: until then a click would submit a form natively. */
function useHydrated(): boolean {
  return useSyncExternalStore(noSubscribe, () => true, () => false);
}
