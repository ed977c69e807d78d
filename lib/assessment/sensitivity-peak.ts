/**
 * The peak of the sensitivity function Ms = max |1 / (1 + L)| and the gain margin of a discrete loop
 * L = G C, G = q^-nk B(q^-1) / F(q^-1) and C = num / den in ascending powers of q^-1 (common
 * practice; Åström & Hägglund, Advanced PID Control, 2006, from memory), on a log grid of
 * frequencies refined around the peak, the gain margin's phase crossing found by bisection. Checked
 * against scipy.signal.freqz in tests/assessment/loop-margin.test.ts.
 */
/** Complex helpers on [re, im] pairs. */
function evalQ(c: ArrayLike<number>, cosw: Float64Array, sinw: Float64Array, shift = 0): [number, number] {
  // Σ c_i e^{-jω(i+shift)} with cos/sin tables of ω·k for k = 0.. (index i + shift).
  let re = 0;
  let im = 0;
  for (let i = 0; i < c.length; i++) {
    re += c[i]! * cosw[i + shift]!;
    im -= c[i]! * sinw[i + shift]!;
  }
  return [re, im];
}

const GRID = 600;

/** Ms and the gain margin of G = q^-nk (b0 + b1 q^-1)/(1 + f1 q^-1 + f2 q^-2) with the controller C = num/den. */
export function sensitivityPeak(b: readonly number[], f: readonly number[], nk: number, cNum: readonly number[], cDen: readonly number[]): { ms: number; gainMargin: number | null } {
  const len = Math.max(nk + b.length, f.length, cNum.length, cDen.length) + 1;
  const cosw = new Float64Array(len);
  const sinw = new Float64Array(len);
  const loop = (w: number): [number, number] => {
    for (let k = 0; k < len; k++) {
      cosw[k] = Math.cos(w * k);
      sinw[k] = Math.sin(w * k);
    }
    const [br, bi] = evalQ(b, cosw, sinw, nk);
    const [fr, fi] = evalQ(f, cosw, sinw);
    const [nr, ni] = evalQ(cNum, cosw, sinw);
    const [dr, di] = evalQ(cDen, cosw, sinw);
    // L = (B N) / (F D)
    const pr = br * nr - bi * ni;
    const pi = br * ni + bi * nr;
    const qr = fr * dr - fi * di;
    const qi = fr * di + fi * dr;
    const q2 = qr * qr + qi * qi;
    return [(pr * qr + pi * qi) / q2, (pi * qr - pr * qi) / q2];
  };
  const lo = Math.log(1e-4);
  const hi = Math.log(Math.PI);
  let ms = 0;
  let best = 0;
  let gm: number | null = null;
  let prev: [number, number] | null = null;
  let prevW = 0;
  for (let i = 0; i <= GRID; i++) {
    const w = Math.exp(lo + ((hi - lo) * i) / GRID);
    const [lr, li] = loop(w);
    const s = 1 / Math.hypot(1 + lr, li);
    if (s > ms) {
      ms = s;
      best = w;
    }
    // The first crossing of the negative real axis (Im L changes sign with Re L < 0).
    if (gm === null && prev && prev[1] * li <= 0 && lr < 0 && prev[0] < 0) {
      // bisection on the sign of Im L between the two grid points
      let a = prevW;
      let b2 = w;
      for (let j = 0; j < 40; j++) {
        const mid = Math.sqrt(a * b2);
        if (loop(mid)[1] * prev[1] > 0) a = mid;
        else b2 = mid;
      }
      const [xr, xi] = loop(Math.sqrt(a * b2));
      gm = 1 / Math.hypot(xr, xi);
    }
    prev = [lr, li];
    prevW = w;
  }
  // Refine the peak on a finer grid around the best point.
  const step = (hi - lo) / GRID;
  for (let i = -50; i <= 50; i++) {
    const w = Math.min(Math.PI, best * Math.exp((step * i) / 50));
    const [lr, li] = loop(w);
    ms = Math.max(ms, 1 / Math.hypot(1 + lr, li));
  }
  return { ms, gainMargin: gm };
}

