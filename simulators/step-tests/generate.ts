/**
 * Writes the demo step test `tic-1201-bump-test.csv`: INVENTED demo data, made by simulating the
 * demo plant of loop TIC-1201 (Vantrell Controls, Marrow Fen, dryer group 3 steam temperature; an
 * invented company, site and tag) through an open-loop MV bump test in manual. The plant is
 * `DEMO_PLANTS["TIC-1201"]` of lib/seed/demo.ts (first order plus dead time, gain in %/% of span),
 * discretised with lib/control's c2dZoh at the 2 s logging period, plus seeded measurement noise.
 *
 *   node --import tsx simulators/step-tests/generate.ts
 */
import { writeFileSync } from "node:fs";
import path from "node:path";
import { c2dZoh } from "@/lib/control";
import { DEMO_LOOPS, DEMO_PLANTS } from "@/lib/seed/demo";
import { Prng } from "../prng";

const TAG = "TIC-1201";
const T = 2; // s, the loop's telemetry period
const DURATION = 2400; // s
const START = Date.UTC(2026, 10, 3, 8, 0, 0);
const MV0 = 42; // %
const STEPS = [
  { t: 120, mv: 47 },
  { t: 840, mv: 39 },
  { t: 1560, mv: 44 },
];
const NOISE_DEGC = 0.04;

export function demoStepTestCsv(): string {
  const loop = DEMO_LOOPS.find((l) => l.tag === TAG);
  const plant = DEMO_PLANTS[TAG];
  if (!loop || !plant || plant.plant.type !== "first-order") throw new Error(`demo step test: ${TAG} is not a first-order demo plant`);
  const { gain, timeConstantS, deadTimeS } = plant.plant;
  const [pvLo, pvHi] = [loop.pvLo, loop.pvHi];
  const span = pvHi - pvLo;
  // PV in % of span from MV in %: K e^{-Ls}/(tau s + 1), ZOH at T.
  const d = c2dZoh({ num: [gain], den: [timeConstantS, 1] }, T, deadTimeS);
  const den = d.den.map((c) => c / d.den[0]!);
  const num = d.num.map((c) => c / d.den[0]!);
  const rel = den.length - num.length;
  const rng = new Prng(20261103);
  const pv0Pct = 62; // operating point, % of span (settled at MV0)
  const n = Math.round(DURATION / T);
  const du: number[] = [];
  const dy: number[] = [];
  const lines = ["# INVENTED demo data: simulated bump test of the demo loop TIC-1201 (not a real plant).", "t,mv [%],pv [degC],mode"];
  for (let k = 0; k <= n; k++) {
    const t = k * T;
    let mv = MV0;
    for (const s of STEPS) if (t >= s.t) mv = s.mv;
    du.push(mv - MV0);
    let y = 0;
    for (let i = 1; i < den.length; i++) y -= den[i]! * (dy[k - i] ?? 0);
    for (let j = 0; j < num.length; j++) y += num[j]! * (du[k - rel - j] ?? 0);
    dy.push(y);
    const pv = pvLo + ((pv0Pct + y) / 100) * span + NOISE_DEGC * rng.normal();
    lines.push(`${new Date(START + t * 1000).toISOString()},${mv.toFixed(1)},${pv.toFixed(3)},manual`);
  }
  return lines.join("\n") + "\n";
}

if (process.argv[1] && path.resolve(process.argv[1]) === path.resolve(import.meta.filename)) {
  const out = path.join(import.meta.dirname, "tic-1201-bump-test.csv");
  writeFileSync(out, demoStepTestCsv());
  console.info(`wrote ${path.relative(process.cwd(), out)}`);
}
