/**
 * What the tracker knows about the loop, in numbers: dominant pole and its continuous
 * equivalents, the slowest-decaying oscillating mode (whose decay ratio the margin alarm reads;
 * often not the dominant pole, which may be real), gain headroom, delay, estimation period with a sampling-adequacy note, estimator
 * health, and the Jury test of the characteristic polynomial.
 */
import { zToS } from "@/lib/control/zplane";
import { dominantPole, effectivePoles } from "@/lib/domain/assessment";
import type { LoopStateDto } from "@/lib/domain/types";
import { fmt, fmtAge, fmtSeconds } from "@/lib/client/format";
import { JuryTable } from "./jury-table";

/**
 * Sampling adequacy from ωn·T of the dominant mode. Rule of thumb ωn·T ≈ 0.1–0.6 (Åström &
 * Wittenmark, Computer-Controlled Systems, 3rd ed., 1997 — quoted from memory; guidance only).
 */
export function samplingNote(wnT: number | null): { level: "ok" | "fast" | "slow" | "unknown"; text: string } {
  if (wnT === null || !Number.isFinite(wnT)) return { level: "unknown", text: "No dominant mode yet, so sampling adequacy cannot be judged." };
  if (wnT < 0.1)
    return {
      level: "fast",
      text: `ωn·T = ${wnT.toFixed(3)}: the estimation period is short for this mode. Poles crowd toward z = 1, where small coefficient errors move them far; a longer estimation period (averaged) would condition the estimate better.`,
    };
  if (wnT > 0.6)
    return {
      level: "slow",
      text: `ωn·T = ${wnT.toFixed(3)}: the estimation period is long for this mode; its dynamics are poorly resolved and faster modes are lost. A shorter period would show them.`,
    };
  return { level: "ok", text: `ωn·T = ${wnT.toFixed(3)}: within the usual 0.1–0.6 range for the dominant mode.` };
}

function Row({ k, v, hint }: { k: string; v: React.ReactNode; hint?: string }) {
  return (
    <div className="flex justify-between gap-3 border-b border-line/50 py-0.5 text-sm" title={hint}>
      <dt className="text-muted">{k}</dt>
      <dd className="num text-right font-mono">{v}</dd>
    </div>
  );
}

export function AnalysisPanel({ state, now }: { state: LoopStateDto | null; now: number }) {
  if (!state) return <p className="text-sm text-muted">No estimate yet. The tracker publishes one once it has seen enough samples.</p>;
  const T = state.estimationPeriodS;
  const dom = dominantPole(effectivePoles(state));
  const pc = state.dominant;
  const osc = state.oscillation ?? null;
  const s = dom && dom.radius > 0 ? zToS(dom, T) : null;
  const settling = pc && pc.zeta != null && pc.wn != null && pc.zeta > 0 && pc.zeta < 1 && pc.wn > 0 ? 4 / (pc.zeta * pc.wn) : pc?.timeConstant != null ? 4 * pc.timeConstant : null;
  const wnT = pc?.wn != null ? pc.wn * T : null;
  const crossing = (c: { at: number; low: number; high: number } | null | undefined) =>
    c ? `${new Date(c.at).toISOString().slice(0, 16).replace("T", " ")} UTC (${new Date(c.low).toISOString().slice(11, 16)}–${new Date(c.high).toISOString().slice(11, 16)})` : "no significant trend";
  const note = samplingNote(wnT);
  const age = state.receivedAt ? (now - state.receivedAt) / 1000 : null;
  return (
    <div className="grid gap-4 md:grid-cols-2" data-testid="analysis">
      <section>
        <h3 className="mb-1 font-semibold">Dominant pole</h3>
        <dl>
          <Row k="z" v={dom ? `${fmt(dom.re, 4)} ${dom.im < 0 ? "−" : "+"} ${fmt(Math.abs(dom.im), 4)} j` : "—"} />
          <Row k="radius |z|" v={`${fmt(state.spectralRadius, 4)}${state.radiusSd != null ? ` ± ${fmt(state.radiusSd, 4)} (1σ)` : ""}`} />
          <Row k="rim distance" v={fmt(state.rimDistance, 4)} />
          <Row k="damping ratio ζ" v={pc?.zeta != null ? fmt(pc.zeta, 3) : "—"} />
          <Row k="natural frequency ωn" v={pc?.wn != null ? `${fmt(pc.wn, 4)} rad/s` : "—"} />
          <Row k="time constant τ" v={fmtSeconds(pc?.timeConstant ?? null)} />
          <Row k="settling time (2 %)" v={fmtSeconds(settling)} hint="4/(ζωn) for an oscillating mode, 4τ for a real one (common practice)" />
          <Row k="s-plane equivalent" v={s ? `${fmt(s.re, 4)} ${s.im < 0 ? "−" : "+"} ${fmt(Math.abs(s.im), 4)} j  1/s` : "—"} />
          {dom && dom.re < 0 && Math.abs(dom.im) < 1e-9 && <Row k="note" v="negative real pole: rings at the Nyquist frequency, no continuous equivalent" />}
          <Row k="gain headroom" v={state.gainHeadroom == null ? "—" : Number.isFinite(state.gainHeadroom) ? `× ${fmt(state.gainHeadroom, 2)}` : "unbounded"} hint="factor by which the loop gain may grow before a closed-loop pole reaches the unit circle" />
          <Row k="delay" v={state.delaySamples == null ? "—" : `${state.delaySamples} samples = ${fmtSeconds(state.delaySamples * T)}`} />
          <Row k={`decay ratio reaches ${state.forecast?.alarmLevel ? fmt(state.forecast.alarmLevel.decayRatio, 2) : "the alarm level"} (forecast)`} v={crossing(state.forecast?.alarmLevel)} />
          <Row k="radius reaches 1 (forecast)" v={crossing(state.forecast?.radiusOne)} />
        </dl>
        <h3 className="mb-1 mt-3 font-semibold">Slowest-decaying oscillating mode</h3>
        {osc ? (
          <dl data-testid="oscillating-mode">
            <Row k="z" v={`${fmt(osc.re, 4)} ± ${fmt(Math.abs(osc.im), 4)} j`} />
            <Row k="radius |z|" v={`${fmt(osc.radius, 4)}${osc.sdRadius != null ? ` ± ${fmt(osc.sdRadius, 4)} (1σ)` : ""}`} />
            <Row k="decay ratio" v={fmt(state.decayRatio ?? osc.decayRatio, 3)} hint="amplitude ratio of successive peaks of this mode; 1 on the unit circle" />
            <Row k="damping ratio ζ" v={fmt(osc.zeta, 3)} />
            <Row k="period" v={fmtSeconds(osc.periodS)} />
          </dl>
        ) : (
          <p className="text-sm text-muted">None: no complex closed-loop pole, so no decay ratio.</p>
        )}
        <p className="mt-1 text-xs text-muted">
          The margin alarm reads this mode with its radius moved toward the centre by the policy&apos;s confidence (a number of standard deviations), so its value stays lower while the pole is poorly determined.
        </p>
        <h3 className="mb-1 mt-3 font-semibold">Estimation</h3>
        <dl>
          <Row k="tracker state" v={`${state.trackerState}${state.stateReason ? ` — ${state.stateReason}` : ""}`} />
          <Row k="estimation period" v={fmtSeconds(T)} />
          <Row k="samples seen" v={state.samples.toLocaleString("en-GB")} />
          <Row k="excitation" v={fmt(state.excitation, 4)} hint="conditioning of the identification equations (pivot ratio, 0 to 1): near 0, the data do not excite the plant" />
          <Row
            k="one-step fit"
            v={state.fitPercent == null ? "—" : state.fitPercent <= -100 ? "≤ −100 %" : `${fmt(state.fitPercent, 1)} %`}
            hint="1 − (one-step prediction error sd) / (PV sd), over the same recent samples. Where white measurement noise dominates PV, a model of slow dynamics amplifies it in its prediction and this reads low or negative; it does not by itself make the poles doubtful (the tracker state says when the model no longer fits)."
          />
          <Row k="data age" v={fmtAge(age)} />
          <Row k="data-only poles" v={state.dataPolesKind === "closed-loop" ? "closed loop (SP moves seen)" : "disturbance response (constant SP)"} />
        </dl>
        <p className={`mt-2 text-sm ${note.level === "ok" || note.level === "unknown" ? "text-muted" : "text-high"}`} data-testid="sampling-note">
          Sampling: {note.text}
        </p>
      </section>
      <section>
        <h3 className="mb-1 font-semibold">Stability without roots: Jury test</h3>
        <JuryTable characteristic={state.characteristic} stable={state.juryStable} rimUndecided={state.rimUndecided} />
        <h3 className="mb-1 mt-3 font-semibold">Closed-loop poles</h3>
        <ul className="num font-mono text-sm">
          {state.modelPoles.map((p, i) => (
            <li key={i}>
              × {fmt(p.re, 4)} {p.im < 0 ? "−" : "+"} {fmt(Math.abs(p.im), 4)}j · |z| {fmt(p.radius, 4)}
              {p.sdRadius != null ? ` ± ${fmt(p.sdRadius, 4)}` : ""}
            </li>
          ))}
          {state.dataPoles.map((p, i) => (
            <li key={`d${i}`} className="text-muted">
              + {fmt(p.re, 4)} {p.im < 0 ? "−" : "+"} {fmt(Math.abs(p.im), 4)}j · |z| {fmt(p.radius, 4)}
            </li>
          ))}
        </ul>
      </section>
    </div>
  );
}
