/** The step-test chart: measured PV beside the identified models' simulated PV, on the finest grid. */
import { simulateArx, type ArxModel } from "@/lib/control";
import { simulateFopdt, type FopdtFit, type IpdtFit } from "./fopdt";
import type { Detrended, UniformSeries } from "./resample";
import { CHART_POINTS, type StepTestResult } from "./result";

export interface ChartInput {
  model: ArxModel;
  /** The pass the final model comes from (its input and trend, every final.T). */
  final: { T: number; u: Float64Array; yTrend: Float64Array };
  /** The log detrended at T1 (the logged period, averaged down for long logs). */
  fine: Pick<Detrended, "u" | "yTrend">;
  fineSeries: UniformSeries;
  T1: number;
  fo: FopdtFit | null;
  ip: IpdtFit | null;
}

/**
 * Chart on the fine grid, thinned to CHART_POINTS: the ARX simulation (every final.T)
 * interpolated, the summary model's simulation at T1, both with the operating point added back.
 */
export function chartOfFit({ model, final, fine, fineSeries, T1, fo, ip }: ChartInput): StepTestResult["chart"] {
  const sim = simulateArx(model, final.u);
  const nFine = fineSeries.pv.length;
  let summary: Float64Array | null = null;
  if (ip) {
    summary = new Float64Array(nFine);
    let acc = 0;
    const N = Math.floor(ip.deadTimeS / T1 + 1e-9);
    const f = ip.deadTimeS - N * T1;
    for (let k = 0; k < nFine; k++) {
      summary[k] = ip.rate * acc + ip.offset + fine.yTrend[k]!;
      acc += (T1 - f) * (fine.u[k - N] ?? 0) + f * (fine.u[k - N - 1] ?? 0);
    }
  } else if (fo) {
    summary = simulateFopdt(fine.u, T1, fo.timeConstantS, fo.deadTimeS);
    for (let k = 0; k < nFine; k++) summary[k] = fo.gain * summary[k]! + fo.offset + fine.yTrend[k]!;
  }
  const stride = Math.max(1, Math.ceil(nFine / CHART_POINTS));
  const chart: StepTestResult["chart"] = { t: [], pvMeasured: [], pvSimulated: [], pvSummary: summary ? [] : null, mv: [], sp: fineSeries.sp ? [] : null };
  const nSim = sim.length;
  for (let k = 0; k < nFine; k += stride) {
    const t = k * T1;
    const x = Math.min(t / final.T, nSim - 1);
    const i = Math.floor(x);
    const w = x - i;
    const at = (j: number) => sim[j]! + final.yTrend[j]!;
    const simAt = i + 1 < nSim ? at(i) + w * (at(i + 1) - at(i)) : at(nSim - 1);
    chart.t.push(round(t, 6));
    chart.pvMeasured.push(round(fineSeries.pv[k]!, 6));
    chart.pvSimulated.push(round(simAt, 6));
    chart.pvSummary?.push(round(summary![k]!, 6));
    chart.mv.push(round(fineSeries.mv[k]!, 6));
    chart.sp?.push(round(fineSeries.sp![k]!, 6));
  }
  return chart;
}

function round(x: number, digits: number): number {
  return Number(x.toPrecision(digits + 2));
}
