"use client";
/**
 * Evidence panel of a loop's routine-data finding (loop detail): the PV against MV plot of the
 * recent samples (a sticking valve draws a parallelogram, a linear cycle an ellipse — the shape
 * test of He et al. 2007 reads the same data), the control error's autocorrelation (regularity
 * and decay, Thornhill, Huang & Zhang 2003), the oscillation period beside the period of the
 * loop's own dominant pole (2πT/|arg z|) with the angle it means at the analysis period, and the
 * evidence lines and cautions. The verdict is the one the loop's assessment carries
 * (`state.routine`, with the site's period group); the stored report behind it gives the plots.
 * Advisory: "likely …", never a certainty. Lean SVG, neutral ink.
 */
import { useMemo } from "react";
import { useLoop, useLoopSamples } from "@/lib/client/hooks";
import { useLoopFinding } from "@/lib/client/findings";
import { fmt, fmtSeconds } from "@/lib/client/format";
import type { LoopAssessmentReport } from "@/lib/assessment/types";
import type { RoutineFindings } from "@/lib/domain/findings";
import { FindingMark } from "./finding-mark";

const W = 260;
const H = 180;
const PAD = 24;

function PvMvPlot({ pts }: { pts: { pv: number; mv: number }[] }) {
  const path = useMemo(() => {
    if (pts.length < 2) return null;
    let pvLo = Infinity, pvHi = -Infinity, mvLo = Infinity, mvHi = -Infinity;
    for (const p of pts) {
      pvLo = Math.min(pvLo, p.pv); pvHi = Math.max(pvHi, p.pv);
      mvLo = Math.min(mvLo, p.mv); mvHi = Math.max(mvHi, p.mv);
    }
    const sx = (v: number) => PAD + ((v - mvLo) / (mvHi - mvLo || 1)) * (W - 2 * PAD);
    const sy = (v: number) => H - PAD - ((v - pvLo) / (pvHi - pvLo || 1)) * (H - 2 * PAD);
    // At most ~600 points drawn (thinned evenly).
    const step = Math.max(1, Math.ceil(pts.length / 600));
    let d = "";
    for (let i = 0; i < pts.length; i += step) d += `${i ? "L" : "M"}${sx(pts[i]!.mv).toFixed(1)} ${sy(pts[i]!.pv).toFixed(1)}`;
    return { d, pvLo, pvHi, mvLo, mvHi };
  }, [pts]);
  return (
    <figure className="flex flex-col gap-1">
      <figcaption className="text-xs text-muted">PV against MV (recent samples)</figcaption>
      <svg width={W} height={H} role="img" aria-label="PV against MV" className="rounded border border-line">
        {path ? (
          <>
            <path d={path.d} fill="none" stroke="currentColor" strokeWidth="1" strokeOpacity="0.7" />
            <text x={PAD} y={H - 6} fontSize="10" fill="currentColor">MV {fmt(path.mvLo)}–{fmt(path.mvHi)}</text>
            <text x={4} y={12} fontSize="10" fill="currentColor">PV {fmt(path.pvLo)}–{fmt(path.pvHi)}</text>
          </>
        ) : (
          <text x={PAD} y={H / 2} fontSize="11" fill="currentColor">waiting for samples</text>
        )}
      </svg>
    </figure>
  );
}

function AcfPlot({ acf, periodS }: { acf: number[]; periodS: number }) {
  const n = acf.length;
  const sx = (k: number) => PAD + (k / Math.max(1, n - 1)) * (W - 2 * PAD);
  const sy = (v: number) => H / 2 - v * (H / 2 - PAD);
  let d = "";
  acf.forEach((v, k) => (d += `${k ? "L" : "M"}${sx(k).toFixed(1)} ${sy(v).toFixed(1)}`));
  return (
    <figure className="flex flex-col gap-1">
      <figcaption className="text-xs text-muted">Autocorrelation of the control error</figcaption>
      <svg width={W} height={H} role="img" aria-label="Autocorrelation of the control error" className="rounded border border-line">
        <line x1={PAD} x2={W - PAD} y1={sy(0)} y2={sy(0)} stroke="currentColor" strokeOpacity="0.3" />
        {n > 1 && <path d={d} fill="none" stroke="currentColor" strokeWidth="1.2" />}
        <text x={PAD} y={H - 6} fontSize="10" fill="currentColor">lag 0–{fmt((n - 1) * periodS)} s</text>
      </svg>
    </figure>
  );
}

const deg = (rad: number) => `${((rad * 180) / Math.PI).toFixed(1)}°`;

export function FindingEvidencePanel({ loopId }: { loopId: number }) {
  const { report, error } = useLoopFinding(loopId);
  const finding = useLoop(loopId).state?.routine ?? null;
  const { samples } = useLoopSamples(loopId, 1800);
  const pts = useMemo(() => samples.filter((s) => s.quality === undefined || s.quality === "good").map((s) => ({ pv: s.pv, mv: s.mv })), [samples]);
  if (error) return <p className="text-sm text-muted">The finding could not be loaded: {error.message}</p>;
  return (
    <ReportEvidence
      title="Finding from routine data"
      finding={finding}
      meta={finding ? `confidence ${finding.confidence.toFixed(2)} · window ${fmtSeconds(finding.windowS)} · ${new Date(finding.at).toISOString().slice(11, 19)} UTC` : null}
      report={report}
      pts={pts}
      shared={finding?.sharedOscillation ?? null}
    />
  );
}

/**
 * The plots, figures, evidence lines and cautions of one assessment report: the live finding's
 * (above) or a stored one's (an assessed historian export, app/(console)/loops/[loopId]/exports).
 */
export function ReportEvidence({
  title,
  finding,
  meta,
  report,
  pts,
  shared,
}: {
  title: string;
  finding: (Pick<RoutineFindings, "label" | "confidence" | "needsS" | "reason" | "evidence">) | null;
  meta: string | null;
  report: LoopAssessmentReport | null;
  pts: { pv: number; mv: number }[];
  shared: RoutineFindings["sharedOscillation"];
}) {
  const T = report?.details.analysisPeriodS ?? null;
  const oscP = report?.oscillation.detected ? report.oscillation.periodS : null;
  const ownP = report?.details.ownModePeriodS ?? null;
  return (
    <section className="flex flex-col gap-3 rounded-md border border-line bg-surface p-3" aria-label={title} data-testid="finding-evidence">
      <header className="flex flex-wrap items-baseline gap-3">
        <h2 className="text-base font-semibold">{title}</h2>
        <FindingMark finding={finding} />
        {meta && <span className="text-xs text-muted">{meta}</span>}
      </header>
      <div className="flex flex-wrap gap-4">
        <PvMvPlot pts={pts} />
        {report && T !== null && report.details.errorAcf.length > 1 && <AcfPlot acf={report.details.errorAcf} periodS={T} />}
        {report && (
          <dl className="grid grid-cols-[auto_auto] gap-x-3 gap-y-1 text-sm">
            <dt className="text-muted">oscillation period</dt>
            <dd className="num font-mono">{oscP !== null ? `${fmt(oscP)} s` : "none detected"}</dd>
            <dt className="text-muted">regularity r</dt>
            <dd className="num font-mono">{report.oscillation.regularity !== null ? fmt(report.oscillation.regularity) : "–"}</dd>
            <dt className="text-muted">own dominant pole period</dt>
            <dd className="num font-mono">{ownP !== null ? `${fmt(ownP)} s` : "no own model (no set-point moves)"}</dd>
            {T !== null && oscP !== null && (
              <>
                <dt className="text-muted">angle of the cycle at T = {fmt(T)} s</dt>
                <dd className="num font-mono">{deg((2 * Math.PI * T) / oscP)}</dd>
              </>
            )}
            {T !== null && ownP !== null && (
              <>
                <dt className="text-muted">own pole angle |arg z|</dt>
                <dd className="num font-mono">{deg((2 * Math.PI * T) / ownP)}</dd>
              </>
            )}
            {shared && (
              <>
                <dt className="text-muted">same period (±5 %) on this site</dt>
                <dd data-testid="shared-oscillation">{shared.loops.map((l) => `${l.tag} ${fmt(l.periodS)} s`).join(", ")}</dd>
              </>
            )}
            <dt className="text-muted">valve stiction</dt>
            <dd>{report.stiction.verdict}</dd>
            <dt className="text-muted">Harris index</dt>
            <dd className="num font-mono">{report.harrisIndex !== null ? fmt(report.harrisIndex) : "– (dead time not configured, or withheld)"}</dd>
            <dt className="text-muted">service factor</dt>
            <dd className="num font-mono">{report.serviceFactor !== null ? `${(100 * report.serviceFactor).toFixed(0)} %` : "–"}</dd>
          </dl>
        )}
      </div>
      {finding && (
        <ul className="list-disc pl-5 text-sm">
          {finding.reason && <li>{finding.reason}</li>}
          {finding.evidence.map((l, i) => (
            <li key={i}>{l}</li>
          ))}
          {report?.cautions.map((c, i) => (
            <li key={`c${i}`} className="text-muted">{c}</li>
          ))}
        </ul>
      )}
      <p className="text-xs text-muted">Advisory only: a finding is a likely cause, not a certainty; changes to the loop follow the site&apos;s management of change.</p>
    </section>
  );
}
