/**
 * The `assess` command end to end through npm (the command and output shape are a contract):
 * `npm run -s assess -- FILE.csv --config LOOP.json --json` prints one JSON object as the last
 * thing on stdout and exits 0; without --json a readable summary; a bad file exits non-zero with
 * a message naming the line.
 */
import { spawnSync } from "node:child_process";
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { flowLoopJson, simulateLoop } from "./loop-sim";

const root = path.join(import.meta.dirname, "..", "..");
let dir = "";
let csv = "";
let loop = "";

function run(args: string[]) {
  return spawnSync("npm", ["run", "-s", "assess", "--", ...args], { cwd: root, encoding: "utf8", timeout: 60_000 });
}

beforeAll(() => {
  dir = mkdtempSync(path.join(tmpdir(), "rg-assess-"));
  const samples = simulateLoop({ seed: 11, n: 1500, kp: 0.5, ti: 15, sine: { amplitude: 2, periodS: 60 } });
  csv = path.join(dir, "fic-310.csv");
  writeFileSync(csv, "t,sp,pv,mv,mode\n" + samples.map((s) => `${s.t},${s.sp},${s.pv.toFixed(4)},${s.mv.toFixed(4)},${s.mode}`).join("\n") + "\n");
  loop = path.join(dir, "fic-310.json");
  writeFileSync(
    loop,
    JSON.stringify(
      flowLoopJson(
        "FIC-310",
        { description: "Feed flow to the second stripper (demo site)", site: "ignored extra field" },
        { form: "ideal", derivativeOn: "pv", derivativeFilterS: 0 },
      ),
    ),
  );
});

afterAll(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
});

describe("npm run -s assess", () => {
  it("--json: exit 0, the last stdout line is one JSON object with the contract's fields", () => {
    const r = run([csv, "--config", loop, "--json"]);
    expect(r.status, r.stderr).toBe(0);
    const last = r.stdout.trim().split("\n").pop()!;
    const o = JSON.parse(last) as Record<string, unknown>;
    for (const k of ["samples", "spanS", "serviceFactor", "manual", "saturation", "oscillation", "stiction", "harrisIndex", "spectralRadius", "decayRatio", "poles", "disturbanceResponse", "diagnosis", "cautions"]) {
      expect(o, k).toHaveProperty(k);
    }
    expect(o.samples).toBe(1500);
    expect(o.spanS).toBe(1499);
    const osc = o.oscillation as { detected: boolean; periodS: number };
    // The outside sinusoid of 60 s (common practice: period within 5 %).
    expect(osc.detected).toBe(true);
    expect(Math.abs(osc.periodS - 60)).toBeLessThan(3);
    expect(["likely", "unlikely", "undetermined"]).toContain((o.stiction as { verdict: string }).verdict);
    const d = o.diagnosis as { label: string; confidence: number; evidence: string[] };
    expect(d.label).toBe("external-disturbance");
    expect(d.confidence).toBeGreaterThan(0);
    expect(d.evidence.length).toBeGreaterThan(0);
    expect(o.poles).toEqual([]);
  });

  it("without --json: a readable summary", () => {
    const r = run([csv, "--config", loop]);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/Finding: external-disturbance/);
    expect(r.stdout).toMatch(/Oscillation: yes, period/);
  });

  it("a bad file exits non-zero naming the line; a bad config names the field; bad arguments exit 2", () => {
    const bad = path.join(dir, "bad.csv");
    writeFileSync(bad, "t,sp,pv,mv\n0,50,50,40\n1,50,fifty,40\n");
    const r = run([bad, "--config", loop, "--json"]);
    expect(r.status).toBe(1);
    expect(r.stdout).toBe("");
    expect(r.stderr).toMatch(/Line 3, column 3 \(pv\)/);

    const badLoop = path.join(dir, "bad.json");
    writeFileSync(badLoop, JSON.stringify({ pvLo: 0, pvHi: -1, samplePeriodS: 1, controller: { kp: 1 } }));
    const c = run([csv, "--config", badLoop, "--json"]);
    expect(c.status).toBe(1);
    expect(c.stderr).toMatch(/pvHi/);

    expect(run([csv]).status).toBe(2);
  });
});
