/**
 * Idle index: Hägglund, "Automatic detection of sluggish control loops", Control Eng. Practice 7
 * (1999). After a load disturbance, a sluggish loop brings PV back slowly while the output keeps
 * creeping the same way, so the increments of MV and PV share their sign (for a process with
 * positive gain); a well-tuned loop overshoots in MV and the signs differ for part of the time.
 * Ii = (t_pos - t_neg) / (t_pos + t_neg) over the time with both increments significant;
 * near +1 sluggish, near 0 or negative well damped (Hägglund suggests flagging above about 0.4;
 * from memory). The signals are low-pass filtered and increments taken over the filter time,
 * only on closed-loop, constant-SP, good samples while the error is outside its noise band
 * (Hägglund evaluates the index only after detected load disturbances).
 */
export interface IdleIndexInput {
  pv: Float64Array;
  mv: Float64Array;
  e: Float64Array;
  include: Uint8Array;
  T: number;
  /** Filter time, s (about a tenth of the loop's time scale). */
  filterS: number;
  /** +1 for reverse action (positive process gain), -1 for direct. */
  gainSign: number;
  /** Noise sigma of PV and MV (same units as the arrays). */
  pvNoise: number;
  mvNoise: number;
  /** Error noise band (same units as e): only samples with |e - mean| above it count. */
  errorBand: number;
}

export interface IdleIndexResult {
  index: number;
  /** Time counted, s. */
  countedS: number;
}

export function idleIndex(input: IdleIndexInput): IdleIndexResult | null {
  const { pv, mv, e, include, T } = input;
  const n = pv.length;
  const step = Math.max(1, Math.round(input.filterS / T));
  const alpha = 1 / (1 + input.filterS / T);
  const fy = new Float64Array(n);
  const fu = new Float64Array(n);
  let y = pv[0] ?? 0;
  let u = mv[0] ?? 0;
  for (let i = 0; i < n; i++) {
    y += alpha * (pv[i]! - y);
    u += alpha * (mv[i]! - u);
    fy[i] = y;
    fu[i] = u;
  }
  let em = 0;
  let cnt = 0;
  for (let i = 0; i < n; i++) if (include[i]) {
    em += e[i]!;
    cnt++;
  }
  em = cnt ? em / cnt : 0;
  // Increments of the filtered signals over `step` samples: noise sigma shrinks by the filter.
  const shrink = Math.sqrt(alpha / (2 - alpha)) * Math.SQRT2;
  const ty = 2 * input.pvNoise * shrink + 1e-12;
  const tu = 2 * input.mvNoise * shrink + 1e-12;
  let pos = 0;
  let neg = 0;
  for (let i = step; i < n; i++) {
    if (!include[i] || !include[i - step]) continue;
    if (Math.abs(e[i]! - em) < input.errorBand) continue;
    const dy = fy[i]! - fy[i - step]!;
    const du = fu[i]! - fu[i - step]!;
    if (Math.abs(dy) < ty || Math.abs(du) < tu) continue;
    if (dy * du * input.gainSign > 0) pos++;
    else neg++;
  }
  const total = pos + neg;
  if (total < 20) return null;
  return { index: (pos - neg) / total, countedS: total * T };
}
