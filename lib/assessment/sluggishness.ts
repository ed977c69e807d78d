/**
 * Idle index: Hägglund, "Automatic detection of sluggish control loops", Control Eng. Practice 7
 * (1999). After a load disturbance a sluggish loop brings PV back slowly while the output keeps
 * creeping the same way, so the increments of MV and PV share their sign (for a process with
 * positive gain); a well-tuned loop recovers quickly and overshoots, so the signs differ for a
 * good part of the episode. Ii = (t_pos - t_neg) / (t_pos + t_neg); near +1 sluggish (Hägglund
 * flags values above about 0.4; from memory).
 *
 * As Hägglund evaluates it only after detected load disturbances, the index here is taken over
 * load-disturbance episodes: stretches between zero crossings of the low-pass filtered error
 * (Hägglund 1995's events), keeping the larger half by IAE (scale-free, instead of a fixed IAE
 * limit). The signals are low-pass filtered with a time constant of a fifth of the loop's time
 * scale, increments are taken over that time, and only increments beyond twice their noise
 * count.
 */
export interface IdleIndexInput {
  pv: Float64Array;
  mv: Float64Array;
  e: Float64Array;
  include: Uint8Array;
  T: number;
  /** Filter time, s. */
  filterS: number;
  /** +1 for reverse action (positive process gain), -1 for direct. */
  gainSign: number;
  /** Noise sigma of PV and MV (same units as the arrays). */
  pvNoise: number;
  mvNoise: number;
}

export interface IdleIndexResult {
  index: number;
  /** Time counted, s. */
  countedS: number;
  episodes: number;
}

function lowPass(x: Float64Array, alpha: number): Float64Array {
  const out = new Float64Array(x.length);
  let v = x[0] ?? 0;
  for (let i = 0; i < x.length; i++) {
    v += alpha * (x[i]! - v);
    out[i] = v;
  }
  return out;
}

export function idleIndex(input: IdleIndexInput): IdleIndexResult | null {
  const { include, T } = input;
  const n = input.pv.length;
  const step = Math.max(1, Math.round(input.filterS / T));
  const alpha = 1 / (1 + input.filterS / T);
  const fy = lowPass(input.pv, alpha);
  const fu = lowPass(input.mv, alpha);
  const fe = lowPass(input.e, alpha);
  let em = 0;
  let cnt = 0;
  for (let i = 0; i < n; i++) if (include[i]) {
    em += fe[i]!;
    cnt++;
  }
  em = cnt ? em / cnt : 0;
  // Episodes between zero crossings of the filtered error, inside included stretches.
  const episodes: { s: number; e: number; iae: number }[] = [];
  let s = -1;
  let sign = 0;
  let iae = 0;
  for (let i = 0; i <= n; i++) {
    const ok = i < n && include[i] === 1;
    const v = ok ? fe[i]! - em : 0;
    const sg = v > 0 ? 1 : v < 0 ? -1 : 0;
    if (!ok || (sg !== 0 && sg !== sign)) {
      if (s >= 0 && i - s > 2 * step) episodes.push({ s, e: i, iae });
      s = ok ? i : -1;
      sign = sg;
      iae = 0;
    }
    if (ok) iae += Math.abs(v);
  }
  if (episodes.length < 4) return null;
  const sorted = episodes.map((p) => p.iae).sort((a, b) => a - b);
  const cut = sorted[Math.floor(sorted.length / 2)]!;
  const shrink = Math.sqrt(alpha / (2 - alpha)) * Math.SQRT2;
  const ty = 2 * input.pvNoise * shrink + 1e-12;
  const tu = 2 * input.mvNoise * shrink + 1e-12;
  let pos = 0;
  let neg = 0;
  let used = 0;
  for (const p of episodes) {
    if (p.iae < cut) continue;
    used++;
    for (let i = p.s + step; i < p.e; i++) {
      const dy = fy[i]! - fy[i - step]!;
      const du = fu[i]! - fu[i - step]!;
      if (Math.abs(dy) < ty || Math.abs(du) < tu) continue;
      if (dy * du * input.gainSign > 0) pos++;
      else neg++;
    }
  }
  const total = pos + neg;
  if (total < 20) return null;
  return { index: (pos - neg) / total, countedS: total * T, episodes: used };
}
