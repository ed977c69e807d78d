/**
 * The `assess` command end to end through npm (the command and output shape are a contract):
 * `npm run -s assess -- FILE.csv --config LOOP.json --json` prints one JSON object as the last
 * thing on stdout and exits 0; without --json a readable summary; a bad file exits non-zero with
 * a message naming the line.
 */
import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { assessLoop, parseAssessCsv, parseLoopConfig } from "@/lib/assessment";
import { flowLoopJson, simulateLoop } from "./loop-sim";

const root = path.join(import.meta.dirname, "..", "..");
let dir = "";
let csv = "";
let loop = "";

function run(args: string[]) {
  return spawnSync("npm", ["run", "-s", "assess", "--", ...args], { cwd: root, encoding: "utf8", timeout: 60_000 });
}

/** A file the command must refuse: exit 1, nothing on stdout, the message on stderr. */
function expectRefused(name: string, text: string, message: RegExp): void {
  const file = path.join(dir, name);
  writeFileSync(file, text);
  const r = run([file, "--config", loop, "--json"]);
  expect(r.status).toBe(1);
  expect(r.stdout).toBe("");
  expect(r.stderr).toMatch(message);
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
    expectRefused("bad.csv", "t,sp,pv,mv\n0,50,50,40\n1,50,49.9.1,40\n", /Line 3, column 3 \(pv\)/);

    const badLoop = path.join(dir, "bad.json");
    writeFileSync(badLoop, JSON.stringify({ pvLo: 0, pvHi: -1, samplePeriodS: 1, controller: { kp: 1 } }));
    const c = run([csv, "--config", badLoop, "--json"]);
    expect(c.status).toBe(1);
    expect(c.stderr).toMatch(/pvHi/);

    expect(run([csv]).status).toBe(2);
  });

  describe("exports from other tools read like the plain file (same oscillation and finding as the plain file assessed in process)", () => {
    const samples = simulateLoop({ seed: 11, n: 1500, kp: 0.5, ti: 15, sine: { amplitude: 2, periodS: 60 } });
    const t0 = Date.UTC(2026, 2, 1);
    const comma = (v: number | string) => String(v).replace(".", ",");
    const j = flowLoopJson("FIC-310") as { controller: Record<string, unknown> };
    const variants: [string, string, () => Buffer | string, string | null, RegExp | null][] = [
      ["a spreadsheet's UTF-16 tab-separated text", "unicode-text.csv", () => Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from("t\tsp\tpv\tmv\tmode\r\n" + samples.map((s) => `${s.t}\t${s.sp}\t${s.pv.toFixed(4)}\t${s.mv.toFixed(4)}\t${s.mode}`).join("\r\n") + "\r\n", "utf16le")]), null, null],
      ["a European export (sep=; line, decimal commas, ISO times with +00:00, modes in capitals)", "european.csv", () => "sep=;\r\nt;SP [m3/h];PV [m3/h];MV [%];Mode\r\n" + samples.map((s) => `${new Date(t0 + s.t * 1000).toISOString().replace("T", " ").replace("Z", "+00:00")};${comma(s.sp)};${comma(s.pv.toFixed(4))};${comma(s.mv.toFixed(4))};${(s.mode ?? "").toUpperCase()}`).join("\r\n"), null, null],
      ["milliseconds since 1970 without a unit (with a caution)", "epoch-ms.csv", () => "t,sp,pv,mv,mode\n" + samples.map((s) => `${t0 + s.t * 1000},${s.sp},${s.pv.toFixed(4)},${s.mv.toFixed(4)},${s.mode}`).join("\n"), null, /read as milliseconds since 1970/],
      ["a loop file with a BOM, numbers as strings and capitalised words", "", () => "", "\ufeff" + JSON.stringify({ ...j, pvLo: "0", pvHi: "100", samplePeriodS: "1", kind: "Flow", controller: { ...j.controller, kp: "0.5", ti: "15", action: "Reverse" } }), null],
      ["a loop file without samplePeriodS (the export's median spacing, with a caution)", "", () => "", JSON.stringify({ ...j, samplePeriodS: undefined }), /samplePeriodS not given: read as the export's median spacing, 1 s/],
    ];
    for (const [name, file, content, loopText, caution] of variants) {
      it(name, () => {
        const reference = assessLoop(parseAssessCsv(readFileSync(csv, "utf8")).samples, parseLoopConfig(JSON.parse(readFileSync(loop, "utf8"))));
        const csvFile = file ? path.join(dir, file) : csv;
        if (file) writeFileSync(csvFile, content());
        const loopFile = loopText ? path.join(dir, "loop-text.json") : loop;
        if (loopText) writeFileSync(loopFile, loopText);
        const r = run([csvFile, "--config", loopFile, "--json"]);
        expect(r.status, r.stderr).toBe(0);
        const o = JSON.parse(r.stdout.trim().split("\n").pop()!) as typeof reference;
        expect(o.samples).toBe(1500);
        expect(o.oscillation).toEqual(JSON.parse(JSON.stringify(reference.oscillation)));
        expect(o.diagnosis.label).toBe(reference.diagnosis.label);
        if (caution) expect(o.cautions.join(" ")).toMatch(caution);
      });
    }
  });

  it("a file or loop file that cannot be read exits 1 saying why in words, naming the file", () => {
    const missing = path.join(dir, "no-such-export.csv");
    const r = run([missing, "--config", loop, "--json"]);
    expect(r.status).toBe(1);
    expect(r.stdout).toBe("");
    expect(r.stderr).toContain(`${missing}: no such file`);
    const folder = run([dir, "--config", loop, "--json"]);
    expect(folder.status).toBe(1);
    expect(folder.stderr).toContain(`${dir}: is a folder, not a file`);
    const notJson = path.join(dir, "not-json.json");
    writeFileSync(notJson, "{ tag: FIC-310 }");
    const c = run([csv, "--config", notJson, "--json"]);
    expect(c.status).toBe(1);
    expect(c.stderr).toContain(`${notJson}: not valid JSON`);
  });

  it("a file with only a header exits 1 naming line 1", () => {
    expectRefused("header-only.csv", "t,sp,pv,mv\r\n", /Line 1: only 0 data rows/);
  });
});
