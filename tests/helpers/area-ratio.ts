/**
 * Area ratio of one half-cycle (Singhal & Salsbury, "A simple method for detecting valve stiction
 * in oscillating control loops", J. Process Control 15, 2005; from memory): log(A1/A2), A1 and A2
 * the signal's area before and after its peak (the peak read on the smoothed signal s, its own
 * sample split between both). Positive: slow build-up, fast release. Null when an area is not positive.
 * Used by the time-reversibility tests and the PV-shape study, not by the product.
 */
export function logAreaRatio(x: ArrayLike<number>, s: ArrayLike<number>, a: number, b: number): number | null {
  let sum = 0;
  for (let i = a; i < b; i++) sum += x[i]!;
  const sg = sum >= 0 ? 1 : -1;
  let pk = a;
  for (let i = a; i < b; i++) if (sg * s[i]! > sg * s[pk]!) pk = i;
  let A1 = 0;
  let A2 = 0;
  for (let i = a; i < b; i++) {
    const v = sg * x[i]!;
    if (i < pk) A1 += v;
    else if (i > pk) A2 += v;
    else {
      A1 += v / 2;
      A2 += v / 2;
    }
  }
  return A1 > 0 && A2 > 0 ? Math.log(A1 / A2) : null;
}
