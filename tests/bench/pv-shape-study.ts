/**
 * Study (issue #12, 2026-12-03; nothing of it is in the product): do PV/error-only shape tests
 * separate the sticking valves the assessment misses on study bases from healthy, aggressive,
 * sluggish and outside-disturbance loops? Two published tests, on the control error's
 * half-cycles at the assessment's own period, where the error oscillates or rings:
 *
 * - Area ratio: Singhal & Salsbury, "A simple method for detecting valve stiction in oscillating
 *   control loops", J. Process Control 15 (2005; from memory): A1/A2, the half-cycle's area before
 *   and after its peak; > 1 for a sticking valve on a self-regulating loop (slow build-up, fast
 *   release), 1 for a sinusoid. Read here as the mean of log R against its standard error (ours).
 * - Relay fit: Rossi & Scali, J. Process Control 15 (2005; from memory): each half-cycle fitted by
 *   a sinusoid and by a first-order lag's response to a square (relay) input;
 *   (MSE_sin - MSE_relay) / (MSE_sin + MSE_relay), positive where the relay shape fits better.
 *
 * The half-cycles are found in a time-symmetric way (centred smoothing, each boundary midway
 * between the first and last sign change between two excursions beyond a quarter of the RMS,
 * the samples strictly inside two boundaries): a stationary Gaussian linear process is
 * time-reversible (Weiss, J. Appl. Probab. 12, 1975; from memory), so a direction-free finder
 * gives it a mean log R of zero. The study first had a finder of its own for this; since issue
 * #12's fix the shared one (half-cycles.ts) works this way and is used (the seventh round's
 * figures in docs/assessment-rounds.md came from the study's own finder, whose length limits
 * were on the fractional boundaries). `--reversible` checks log R and load-or-valve.ts's time
 * asymmetry on Gaussian AR(2) series.
 *
 *   node --import tsx tests/bench/pv-shape-study.ts [--study 101,...,110] [--labels a,b] [--out FILE]
 *   node --import tsx tests/bench/pv-shape-study.ts --reversible
 */
import { appendFileSync, writeFileSync } from "node:fs";
import { parseArgs } from "node:util";
import { assessLoop, buildWindow, parseLoopConfig } from "@/lib/assessment";
import { findHalfCycles, fitShape, sineShape, type HalfCycles } from "@/lib/assessment/half-cycles";
import { halfCycleAsymmetry } from "@/lib/assessment/load-or-valve";
import { longestRun } from "@/lib/assessment/stiction";
import { isClosed } from "@/lib/assessment/window";
import { benchmarkPlan, generateRecording } from "@/simulators/benchmark/generate";
import { Prng } from "@/simulators/prng";
import { logAreaRatio } from "../helpers/area-ratio";

const { values: opts } = parseArgs({
  options: {
    study: { type: "string", default: "101,102,103,104,105,106,107,108,109,110" },
    labels: { type: "string", default: "valve-stiction,healthy,external-disturbance,aggressive-tuning,sluggish-tuning" },
    out: { type: "string" },
    reversible: { type: "boolean", default: false },
  },
});

/** Half-cycles found the same way forward and backward in time (the shared finder, half-cycles.ts, since issue #12's fix). */
function symmetricHalfCycles(e: ArrayLike<number>, P: number): HalfCycles | null {
  if (!(P >= 8) || e.length < 2 * P) return null;
  return findHalfCycles(e, P);
}

/** A first-order lag (time constant r·L) under a square wave of half-period L, from one zero crossing of its output to the next. */
function relayShape(L: number, r: number): Float64Array {
  const tau = r * L;
  const E = Math.exp(-L / tau);
  const t0 = tau * Math.log(2 / (1 + E));
  const f = new Float64Array(L);
  for (let k = 0; k < L; k++) {
    const t = k + 0.5 + t0;
    f[k] = t <= L ? 1 - (2 * Math.exp(-t / tau)) / (1 + E) : (2 * Math.exp(-(t - L) / tau)) / (1 + E) - 1;
  }
  return f;
}
const RELAY_R = [0.03, 0.05, 0.08, 0.12, 0.18, 0.25, 0.35, 0.5, 0.7, 1, 1.5, 2.5];

function meanT(v: number[]): { mean: number; t: number; n: number } | null {
  const n = v.length;
  if (n < 6) return null;
  const m = v.reduce((a, b) => a + b, 0) / n;
  const sd = Math.sqrt(v.reduce((a, b) => a + (b - m) ** 2, 0) / (n - 1));
  return { mean: m, t: sd > 0 ? m / (sd / Math.sqrt(n)) : 0, n };
}

/** Area ratio (mean log A1/A2) and relay-against-sine index of the half-cycles of e; a half-cycle with a set-point move is left out. */
function shapeIndices(e: ArrayLike<number>, sp: ArrayLike<number> | null, P: number): { logR: ReturnType<typeof meanT>; relay: ReturnType<typeof meanT> } | null {
  const hc = symmetricHalfCycles(e, P);
  if (!hc) return null;
  const logR: number[] = [];
  const relay: number[] = [];
  for (const [a, b] of hc.spans) {
    let moved = false;
    for (let i = a + 1; i < b; i++) if (sp && sp[i] !== sp[i - 1]) moved = true;
    if (moved) continue;
    const r = logAreaRatio(hc.x, hc.s, a, b);
    if (r !== null) logR.push(r);
    const L = b - a;
    const eSin = fitShape(hc.x, a, b, sineShape(L));
    const eRelay = Math.min(...RELAY_R.map((r) => fitShape(hc.x, a, b, relayShape(L, r))));
    if (eSin + eRelay > 0) relay.push((eSin - eRelay) / (eSin + eRelay));
  }
  return { logR: meanT(logR), relay: meanT(relay) };
}

function reversible(): void {
  const rng = new Prng(777);
  for (const P of [16, 30, 40, 60, 80, 100]) {
    for (const noise of [0, 0.5]) {
      const n = 200_000;
      const r = 0.95;
      const x = new Float64Array(n);
      let y1 = 0;
      let y2 = 0;
      for (let i = 0; i < n; i++) {
        const y = 2 * r * Math.cos((2 * Math.PI) / P) * y1 - r * r * y2 + rng.normal();
        y2 = y1;
        y1 = y;
        x[i] = y;
      }
      let ss = 0;
      for (const v of x) ss += v * v;
      const sd = Math.sqrt(ss / n);
      for (let i = 0; i < n; i++) x[i] = x[i]! + noise * sd * rng.normal();
      const fwd = shapeIndices(x, null, P)!.logR!;
      const back = shapeIndices(x.slice().reverse(), null, P)!.logR!;
      const q = meanT(halfCycleAsymmetry(x, null, P).q)!;
      console.log(`AR(2) r ${r}, period ${P}, white noise ${noise} sd: symmetric log R ${fwd.mean.toFixed(3)} (t ${fwd.t.toFixed(1)}, ${fwd.n}; run backward ${back.mean.toFixed(3)}) | load-or-valve q ${q.mean.toFixed(3)} (t ${q.t.toFixed(1)}, ${q.n})`);
    }
  }
}

function study(): void {
  const labels = opts.labels!.split(",");
  if (opts.out) writeFileSync(opts.out, "");
  const rows: Record<string, unknown>[] = [];
  for (const base of opts.study!.split(",").map(Number)) {
    for (const p of benchmarkPlan()) {
      if (!labels.includes(p.label)) continue;
      const rec = generateRecording("dev", p.index, base);
      const cfg = parseLoopConfig(rec.config);
      const rep = assessLoop(rec.samples, cfg);
      const period = rep.details.dominantPeriodS;
      const ring = rep.details.ringDepth;
      const row: Record<string, unknown> = { id: rec.id, label: rec.label, plant: rec.plantType, every: rec.draw.spec.every, verdict: rep.diagnosis.label, slips: rec.truth.slips };
      if (period && (rep.oscillation.detected || (ring !== null && ring < -0.15)) && !rep.details.compression.compressed) {
        const w = buildWindow(rec.samples, cfg);
        const inc = new Uint8Array(w.n);
        for (let i = 0; i < w.n; i++) if (w.good[i] && isClosed(w, i)) inc[i] = 1;
        const [s, e] = longestRun(inc);
        const ix = shapeIndices(w.e.subarray(s, e), w.sp.subarray(s, e), period / w.T);
        if (ix) Object.assign(row, { period, spanS: w.spanS, logR: ix.logR?.mean, logRt: ix.logR?.t, halfCycles: ix.logR?.n, relay: ix.relay?.mean });
      }
      rows.push(row);
      if (opts.out) appendFileSync(opts.out, `${JSON.stringify(row)}\n`);
    }
  }
  const group = (r: Record<string, unknown>) => (r.label === "valve-stiction" ? (r.verdict === "valve-stiction" ? "stiction, found" : "stiction, missed") : String(r.label));
  console.log("group (integrating or not)            with a figure  t>=3  t>=3 & R>=1.25  t<=-3  relay-vs-sine median");
  for (const integ of [false, true]) {
    for (const g of ["stiction, found", "stiction, missed", "healthy", "aggressive-tuning", "sluggish-tuning", "external-disturbance"]) {
      const rr = rows.filter((r) => group(r) === g && (r.plant === "integrating") === integ && typeof r.logR === "number");
      const t = (r: Record<string, unknown>) => r.logRt as number;
      const relay = rr.map((r) => r.relay as number).sort((a, b) => a - b);
      console.log(
        `${`${g} (${integ ? "integrating" : "other"})`.padEnd(40)}${String(rr.length).padStart(5)}${String(rr.filter((r) => t(r) >= 3).length).padStart(7)}${String(rr.filter((r) => t(r) >= 3 && (r.logR as number) >= Math.log(1.25)).length).padStart(10)}${String(rr.filter((r) => t(r) <= -3).length).padStart(11)}   ${relay.length ? relay[relay.length >> 1]!.toFixed(2) : "-"}`,
      );
    }
  }
}

if (opts.reversible) reversible();
else study();
