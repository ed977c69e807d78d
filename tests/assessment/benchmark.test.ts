/**
 * The benchmark generator makes what its labels say. Checked on the simulator's truth kept beside
 * each recording (valve position, load, true PV, fault mask) and on the loop's margins, never on
 * the assessment: this tests the generator, not the classifier. Three DEV recordings per label.
 */
import { describe, expect, it } from "vitest";
import { amplitudeAt, auditRecording } from "@/simulators/benchmark/audit";
import { recordingCsv } from "@/simulators/benchmark/files";
import { benchmarkPlan, generateRecording, isCorrect, LABELS, recordingSeed, type BenchRecording } from "@/simulators/benchmark/generate";
import { PLANT_TYPES } from "@/simulators/benchmark/loops";
import { loopMargins, simcTuning } from "@/simulators/benchmark/tuning";

const plan = benchmarkPlan();
const firstOf = (label: string, n: number) => plan.filter((p) => p.label === label).slice(0, n).map((p) => generateRecording("dev", p.index));
const subset = new Map<string, BenchRecording[]>(LABELS.map((l) => [l, firstOf(l, 3)]));
const recs = (label: string) => subset.get(label)!;

const share = (rec: BenchRecording, f: (k: number) => boolean) => {
  let n = 0;
  for (let k = 0; k < rec.samples.length; k++) if (f(k)) n++;
  return n / rec.samples.length;
};
const atLimit = (rec: BenchRecording) => {
  const [lo, hi] = rec.draw.spec.mvLimitsPct;
  return share(rec, (k) => rec.truth.mvPct[k]! <= lo + 0.01 * (hi - lo) || rec.truth.mvPct[k]! >= hi - 0.01 * (hi - lo));
};

describe("benchmark plan and seeds", () => {
  it("has at least 160 recordings per set over eight labels and four plant types, borderline cases labelled undetermined", () => {
    expect(plan.length).toBeGreaterThanOrEqual(160);
    for (const l of LABELS) expect(plan.filter((p) => p.label === l).length).toBe(20);
    for (const t of PLANT_TYPES) for (const l of LABELS) expect(plan.some((p) => p.label === l && p.plantType === t)).toBe(true);
    expect(plan.filter((p) => p.label === "undetermined" && p.borderline).length).toBe(16);
  });

  it("keeps DEV, FROZEN and HOLDOUT seeds apart and generates the same recording from the same seed", () => {
    const dev = new Set(plan.map((p) => recordingSeed("dev", p.index)));
    const frozen = new Set(plan.map((p) => recordingSeed("frozen", p.index)));
    for (const p of plan) expect(dev.has(recordingSeed("frozen", p.index))).toBe(false);
    for (const p of plan) expect(dev.has(recordingSeed("holdout", p.index)) || frozen.has(recordingSeed("holdout", p.index))).toBe(false);
    const a = generateRecording("dev", 5);
    const b = generateRecording("dev", 5);
    expect(b.samples).toEqual(a.samples);
    expect(generateRecording("frozen", 5).samples.slice(0, 50)).not.toEqual(a.samples.slice(0, 50));
  });

  it("writes the contract's LOOP.json fields, with the dead time known in some recordings and absent in others", () => {
    const all = [...subset.values()].flat();
    for (const r of all) {
      const c = r.config;
      expect(Object.keys(c)).toEqual(expect.arrayContaining(["tag", "description", "kind", "units", "pvLo", "pvHi", "samplePeriodS", "normalMode", "controller"]));
      expect(Object.keys(c.controller).sort()).toEqual(["action", "derivativeFilterS", "derivativeOn", "form", "kp", "mvHi", "mvLo", "td", "ti"]);
      expect(c.pvHi).toBeGreaterThan(c.pvLo);
      // the time axis matches the configured sample period
      expect(r.samples[1]!.t - r.samples[0]!.t).toBeCloseTo(c.samplePeriodS, 9);
    }
    expect(all.some((r) => r.config.deadTimeS !== undefined)).toBe(true);
    expect(all.some((r) => r.config.deadTimeS === undefined)).toBe(true);
    const periods = new Set(all.map((r) => r.config.samplePeriodS));
    expect(periods.size).toBeGreaterThanOrEqual(4);
    const hours = all.map((r) => (r.samples.length * r.config.samplePeriodS) / 3600);
    expect(Math.min(...hours)).toBeLessThan(4);
    expect(Math.max(...hours)).toBeGreaterThan(10);
  });

  it("writes a CSV with the contract's header and one row per sample", () => {
    const r = recs("manual")[0]!;
    const lines = recordingCsv(r.samples, r.config).trimEnd().split("\n");
    expect(lines[0]).toBe("t,sp,pv,mv,mode");
    expect(lines.length).toBe(r.samples.length + 1);
    const row = lines[1]!.split(",");
    expect(Number(row[2])).toBeCloseTo(r.samples[0]!.pv, 2);
    const iso = recordingCsv(r.samples.slice(0, 3), r.config, { startIso: "2026-11-23T06:00:00+01:00" }).split("\n")[2]!;
    expect(iso.startsWith(`2026-11-23T06:00:${String(r.config.samplePeriodS).padStart(2, "0")}`) || iso.startsWith("2026-11-23T06:00:0")).toBe(true);
    expect(Date.parse(iso.split(",")[0]!)).toBe(Date.parse("2026-11-23T05:00:00Z") + r.config.samplePeriodS * 1000);
  });

  it("scores a borderline case right on its label or a verdict a practitioner would accept", () => {
    expect(isCorrect({ label: "undetermined", alsoAccept: ["healthy"] }, "healthy")).toBe(true);
    expect(isCorrect({ label: "undetermined", alsoAccept: ["healthy"] }, "valve-stiction")).toBe(false);
    expect(isCorrect({ label: "saturated", alsoAccept: [] }, "saturated")).toBe(true);
  });
});

describe("tuning rules and margins the labels rest on", () => {
  // Skogestad, J. Process Control 13 (2003), SIMC with tauC = theta (from memory): GM 3.14 and
  // PM 61.4 deg when tau <= 8 theta (Ti = tau), GM 2.96 and PM 46.9 deg for an integrating plant.
  it("reproduces the SIMC rule's published margins", () => {
    const fo = { type: "first-order" as const, gain: 2, timeConstantS: 10, deadTimeS: 5 };
    const m1 = loopMargins(fo, simcTuning(fo, 5 + 0.0005, 0.001), 0.001);
    expect(m1.gm).toBeCloseTo(3.14, 2);
    expect(m1.pmDeg!).toBeCloseTo(61.4, 1);
    const int = { type: "integrating" as const, gain: 0.01, lagS: 0, deadTimeS: 4 };
    const m2 = loopMargins(int, simcTuning(int, 4 + 0.0005, 0.001), 0.001);
    expect(m2.gm).toBeCloseTo(2.96, 2);
    expect(m2.pmDeg!).toBeCloseTo(46.9, 1);
  });
});

describe("each label's recordings show what the label says (simulator truth)", () => {
  it("healthy: SIMC-like margins, in auto, MV off its limits, no valve, sensor or outside fault", () => {
    for (const r of recs("healthy")) {
      expect(r.draw.margins.gm).toBeGreaterThanOrEqual(2);
      expect(share(r, (k) => r.samples[k]!.mode === "manual")).toBeLessThanOrEqual(0.05);
      expect(atLimit(r)).toBeLessThan(0.05);
      expect(r.draw.spec.stiction ?? r.draw.spec.fault ?? r.draw.spec.load.sine).toBeNull();
    }
  });

  it("aggressive tuning: gain margin at most 1.8 (SIMC at tauC = theta has about 3)", () => {
    for (const r of recs("aggressive-tuning")) {
      expect(r.draw.margins.gm).toBeLessThanOrEqual(1.8);
      expect(r.draw.margins.gm).toBeGreaterThan(1.2); // stable: the loop rings, it does not diverge
      // the SIMC reference: about 3 for first order and integrating plants, less where its PID
      // cannot cancel an underdamped plant's poles exactly
      expect(r.draw.referenceMargins.gm).toBeGreaterThan(2);
    }
  });

  it("sluggish tuning: crossover at most 0.4 of the SIMC loop's and a wide gain margin", () => {
    for (const r of recs("sluggish-tuning")) {
      expect(r.draw.margins.wc! / r.draw.referenceMargins.wc!).toBeLessThanOrEqual(0.4);
      expect(r.draw.margins.gm).toBeGreaterThanOrEqual(4);
    }
  });

  it("valve stiction: the valve sits still while the MV moves, never while the MV has moved more than S + J", () => {
    for (const r of recs("valve-stiction")) {
      const { S, J } = r.draw.spec.stiction!;
      const tr = r.truth;
      expect(share(r, (k) => k > 0 && tr.valvePct[k] === tr.valvePct[k - 1] && tr.mvPct[k] !== tr.mvPct[k - 1])).toBeGreaterThanOrEqual(0.15);
      expect(tr.slips).toBeGreaterThanOrEqual(20);
      // while stuck the MV can move up to S against the last travel and up to J along it, so a
      // stuck segment of the phase plot is at most S + J wide in MV (plus one sample's MV move)
      let maxStep = 0;
      for (let k = 1; k < r.samples.length; k++) maxStep = Math.max(maxStep, Math.abs(tr.mvPct[k]! - tr.mvPct[k - 1]!));
      let lo = tr.mvPct[0]!;
      let hi = lo;
      let widest = 0;
      for (let k = 1; k < r.samples.length; k++) {
        if (tr.valvePct[k] === tr.valvePct[k - 1]) {
          lo = Math.min(lo, tr.mvPct[k]!);
          hi = Math.max(hi, tr.mvPct[k]!);
          widest = Math.max(widest, hi - lo);
        } else lo = hi = tr.mvPct[k]!;
      }
      expect(widest).toBeLessThanOrEqual(S + J + maxStep + 1e-4);
      expect(widest).toBeGreaterThan(0.5 * S);
    }
  });

  it("external disturbance: the sinusoid is in the load and its period dominates the true PV", () => {
    for (const r of recs("external-disturbance")) {
      const sine = r.draw.spec.load.sine!;
      const T = r.config.samplePeriodS;
      const f = 1 / sine.periodS;
      expect(amplitudeAt(r.truth.sinePct, T, f)).toBeCloseTo(sine.amplitudePct, 1);
      const at = amplitudeAt(r.truth.pvTruePct, T, f);
      expect(at).toBeGreaterThanOrEqual(1.5 * r.draw.spec.noiseSdPct);
      for (const other of [0.63, 1.37, 1.71]) expect(at).toBeGreaterThan(2 * amplitudeAt(r.truth.pvTruePct, T, f * other));
    }
  });

  it("saturated: the MV sits at a limit at least a quarter of the time, with the PV off its set point there", () => {
    for (const r of recs("saturated")) {
      expect(atLimit(r)).toBeGreaterThanOrEqual(0.25);
      const span = r.config.pvHi - r.config.pvLo;
      const [lo, hi] = r.draw.spec.mvLimitsPct;
      let off = 0;
      let n = 0;
      for (let k = 0; k < r.samples.length; k++) {
        if (r.truth.mvPct[k]! > lo + 1 && r.truth.mvPct[k]! < hi - 1) continue;
        off += Math.abs(r.samples[k]!.sp - r.samples[k]!.pv) / span;
        n++;
      }
      expect((100 * off) / n).toBeGreaterThan(2 * r.draw.spec.noiseSdPct);
    }
  });

  it("sensor fault: at least a tenth of the readings are faulty, and they look it (frozen, fault code, out of range)", () => {
    const kinds = new Set<string>();
    for (const r of [...recs("sensor-fault"), ...firstOf("sensor-fault", 9).slice(3)]) {
      const f = r.draw.spec.fault!;
      kinds.add(f.kind);
      const bad = [...r.truth.fault.keys()].filter((k) => r.truth.fault[k] === 1);
      expect(bad.length / r.samples.length).toBeGreaterThanOrEqual(0.1);
      if (f.kind === "code") for (const k of bad) expect(r.samples[k]!.pv).toBe(f.code);
      if (f.kind === "frozen") expect(bad.filter((k) => r.truth.fault[k - 1] === 1 && r.samples[k]!.pv !== r.samples[k - 1]!.pv)).toEqual([]);
      if (f.kind === "out-of-range") expect(bad.filter((k) => r.samples[k]!.pv > r.config.pvHi || r.samples[k]!.pv < r.config.pvLo).length).toBeGreaterThan(0.05 * r.samples.length);
    }
    expect(kinds.size).toBeGreaterThanOrEqual(2);
  });

  it("manual: in manual at least 60 % of the time (the mode column says so where there is one) and the MV moves only now and then there", () => {
    // and the first DEV manual recording exported without a mode column
    const withoutMode = plan
      .filter((p) => p.label === "manual")
      .slice(3)
      .map((p) => p.index)
      .reduce<BenchRecording | null>((found, i) => found ?? ((r) => (r.samples[0]!.mode === undefined ? r : null))(generateRecording("dev", i)), null);
    expect(withoutMode).not.toBeNull();
    const manualRecs = [...recs("manual"), withoutMode!];
    for (const r of manualRecs) {
      const spells = r.draw.spec.manual;
      const manual = [...r.samples.keys()].filter((k) => spells.some((s) => r.samples[k]!.t >= s.fromS && r.samples[k]!.t < s.toS));
      expect(manual.length / r.samples.length).toBeGreaterThanOrEqual(0.6);
      if (r.samples[0]!.mode !== undefined) for (const k of manual) expect(r.samples[k]!.mode).toBe("manual");
      // on the controller's true output (a historian's interpolation would draw ramps between stored moves)
      const inManual = new Set(manual);
      const moves = manual.filter((k) => inManual.has(k - 1) && r.truth.mvPct[k] !== r.truth.mvPct[k - 1]).length;
      expect(moves / manual.length).toBeLessThan(0.02);
    }
  });

  it("the generator's own audit agrees on every recording of the subset", () => {
    for (const r of [...subset.values()].flat()) expect(auditRecording(r), r.id).toEqual([]);
  });
});
