/** The UI benchmark's synthetic fleet: loop states with invented poles, and the live batch payload. */
import type { LoopStateBrief, LoopStateDto, PoleDto } from "@/lib/domain/types";
import { toLoopBrief } from "@/server/realtime/summary";

export const N_LOOPS = 2000;
export const BASE_ID = 900_000;
export const UPDATE_MS = 500;

function pole(r: number, th: number): PoleDto {
  return {
    re: r * Math.cos(th),
    im: r * Math.sin(th),
    radius: r,
    sdRadius: 0.004,
    cov: [1e-5, 0, 1e-5],
  };
}

export function stateOf(
  loopId: number,
  tenantId: number,
  r: number,
  th: number,
  now: number,
): LoopStateDto {
  const poles = [pole(r, th), pole(r, -th), pole(0.3, 0)];
  const dr = Math.pow(r, (2 * Math.PI) / th);
  return {
    loopId,
    tenantId,
    at: now,
    receivedAt: now,
    trackerState: "tracking",
    stateReason: null,
    estimationPeriodS: 1,
    samples: 5000,
    excitation: 0.2,
    fitPercent: 88,
    spectralRadius: r,
    rimDistance: 1 - r,
    decayRatio: dr,
    juryStable: true,
    dominant: { zeta: 0.3, wn: 0.2, timeConstant: null },
    gainHeadroom: 2.1,
    radiusSd: 0.004,
    forecast: null,
    modelPoles: poles,
    dataPoles: [pole(r * 0.98, th * 1.05), pole(r * 0.98, -th * 1.05)],
    dataPolesKind: "disturbance-response",
    zeros: [{ re: -0.5, im: 0 }],
    characteristic: [1, -2 * r * Math.cos(th) - 0.3, r * r + 0.6 * r * Math.cos(th), -0.3 * r * r],
    delaySamples: 2,
    last: { t: now, sp: 50, pv: 50, mv: 40, mode: "auto" },
  };
}

// What the server sends for one loop in a `loop:state` batch: its summary, by the server's own function.
export type LiveBatch = LoopStateBrief[];
export const payloadOf = toLoopBrief;
