/**
 * The live summary of a loop (`LoopStateBrief`, lib/domain/types.ts) built from a tracker's full state
 * for the tenant's `loop:state` batches (docs/architecture.md §8: "a batch of loop summaries").
 *
 * It keeps only what the control room, the wall, tiles, area summaries, the loop list and the
 * worst-first order show, rounded to well below what they can show: radii, rim distance, decay
 * ratio and pole coordinates to 1e-4 (a tile's z-plane is about 100 px across the unit circle,
 * the figures show 3 decimals, the order moves in margin steps of 0.02); ζ to 1e-3; ωn, the time
 * constant and the gain headroom to 4 significant digits. Anything not finite becomes null (as
 * JSON would make it). Covariances, zeros, the characteristic polynomial, the forecast, the fit
 * and the last sample stay in the full LoopStateDto (GET /api/loops/[id] and `loop:detail`).
 * For 2,000 loops a batch is about a sixth of the full states' JSON.
 */
import type { DominantMode, OscillatingMode } from "@/lib/domain/assessment";
import type { LoopStateBrief, LoopStateDto, PoleBrief, PoleDto } from "@/lib/domain/types";

/** x rounded to `d` decimals, or null when not finite. */
export function roundTo(x: number | null | undefined, d: number): number | null {
  if (x === null || x === undefined || !Number.isFinite(x)) return null;
  const f = 10 ** d;
  const r = Math.round(x * f) / f;
  return r === 0 ? 0 : r; // no -0 in the payload
}

/** x to `n` significant digits, or null when not finite. */
export function roundSig(x: number | null | undefined, n: number): number | null {
  if (x === null || x === undefined || !Number.isFinite(x)) return null;
  if (x === 0) return 0;
  return Number(x.toPrecision(n));
}

const DEC = 4;

function pole(p: PoleDto): PoleBrief | null {
  const re = roundTo(p.re, DEC);
  const im = roundTo(p.im, DEC);
  const radius = roundTo(p.radius, DEC);
  if (re === null || im === null || radius === null) return null;
  return { re, im, radius };
}

function poles(list: readonly PoleDto[]): PoleBrief[] {
  const out: PoleBrief[] = [];
  for (const p of list) {
    const b = pole(p);
    if (b) out.push(b);
  }
  return out;
}

function dominant(d: DominantMode): DominantMode {
  const out: DominantMode = { zeta: roundTo(d.zeta, 3), wn: roundSig(d.wn, 4), timeConstant: roundSig(d.timeConstant, 4) };
  const re = roundTo(d.re, DEC);
  const im = roundTo(d.im, DEC);
  if (re !== null && im !== null) Object.assign(out, { re, im });
  return out;
}

/** The oscillating mode without its uncertainty; its angle to 1e-4 rad (sets the gauge levels). */
function oscillation(m: OscillatingMode): OscillatingMode | null {
  const v = { re: roundTo(m.re, DEC), im: roundTo(m.im, DEC), radius: roundTo(m.radius, DEC), angle: roundTo(m.angle, DEC), decayRatio: roundTo(m.decayRatio, DEC), zeta: roundTo(m.zeta, 3), periodS: roundSig(m.periodS, 4) };
  for (const x of Object.values(v)) if (x === null) return null;
  return v as OscillatingMode;
}

export function toLoopBrief(s: LoopStateDto): LoopStateBrief {
  return {
    loopId: s.loopId,
    tenantId: s.tenantId,
    at: Math.round(s.at),
    receivedAt: s.receivedAt === null ? null : Math.round(s.receivedAt),
    trackerState: s.trackerState,
    stateReason: s.stateReason,
    estimationPeriodS: s.estimationPeriodS,
    spectralRadius: roundTo(s.spectralRadius, DEC),
    rimDistance: roundTo(s.rimDistance, DEC),
    decayRatio: roundTo(s.decayRatio, DEC),
    juryStable: s.juryStable,
    dominant: s.dominant ? dominant(s.dominant) : null,
    gainHeadroom: roundSig(s.gainHeadroom, 4),
    modelPoles: poles(s.modelPoles),
    dataPoles: poles(s.dataPoles),
    dataPolesKind: s.dataPolesKind,
    polesFrom: s.polesFrom ?? null,
    oscillation: s.oscillation ? oscillation(s.oscillation) : null,
    // the verdict only (evidence, figures and the shared-oscillation group stay in the full state)
    routine: s.routine ? { at: Math.round(s.routine.at), label: s.routine.label, confidence: roundTo(s.routine.confidence, 2) ?? 0, needsS: roundSig(s.routine.needsS, 3) } : null,
  };
}
