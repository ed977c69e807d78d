/**
 * The dead time an engineer would enter for a cross-check loop after a step test with this
 * product's own step-test fit (lib/step-tests/fopdt.ts): the plant's open-loop step response,
 * noise-free and sampled at the loop's period, fitted by a first-order-plus-dead-time model
 * (self-regulating plants) or an integrator plus dead time (levels). For a process with a second
 * lag the fit's apparent dead time exceeds the transport delay (Skogestad's half rule puts half
 * the second lag into it; an integrator's lag shifts the ramp's asymptote by the whole lag).
 * For `bench:crosscheck -- --dead-time step-test`, a study of what the configured dead time
 * means; the scoring run keeps the generator's transport delay.
 */
import { fitFopdt, fitIpdt } from "@/lib/step-tests/fopdt";

export interface CrosscheckPlant {
  kind: "fopdt" | "sopdt" | "integ";
  K: number;
  theta: number;
  tau?: number;
  tau1?: number;
  tau2?: number;
  lag?: number;
}

/** Unit-step response of the plant at time t (s) after the step, before the dead time zero. */
export function plantStepResponse(p: CrosscheckPlant, t: number): number {
  const s = t - p.theta;
  if (s <= 0) return 0;
  if (p.kind === "fopdt") return p.K * (1 - Math.exp(-s / p.tau!));
  if (p.kind === "sopdt") {
    const [a, b] = [p.tau1!, p.tau2!];
    return p.K * (1 - (a * Math.exp(-s / a) - b * Math.exp(-s / b)) / (a - b));
  }
  const lag = p.lag ?? 0;
  return p.K * (s - (lag > 0 ? lag * (1 - Math.exp(-s / lag)) : 0));
}

/** The step-test fit's dead time (s) for the plant sampled every T s, or null when the fit fails. */
export function stepTestDeadTime(p: CrosscheckPlant, T: number): number | null {
  const slow = p.kind === "fopdt" ? p.tau! : p.kind === "sopdt" ? p.tau1! + p.tau2! : 10 * (p.lag ?? 0) + 10 * p.theta;
  const n = Math.min(20_000, Math.ceil((p.theta + 6 * slow) / T));
  const u = new Float64Array(n).fill(1);
  // the input steps at t = 0 and is held; the sample k is taken at k T
  const y = Float64Array.from({ length: n }, (_, k) => plantStepResponse(p, k * T));
  const fit = p.kind === "integ" ? fitIpdt(u, y, T, (n * T) / 2) : fitFopdt(u, y, T, (n * T) / 2);
  return fit ? fit.deadTimeS : null;
}
