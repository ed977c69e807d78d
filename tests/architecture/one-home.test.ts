/**
 * Each of a loop's figures has one home (lib/domain/assessment.ts): this scan fails when source
 * outside it selects "model poles, else data poles", computes a per-cycle decay ratio, picks a
 * dominant pole, or re-runs the pole characteristics / Jury verdict in the browser.
 * Common practice (an architecture check); no external source.
 */
import fs from "node:fs";
import path from "node:path";
import { describe, expect, it } from "vitest";

const ROOT = path.resolve(import.meta.dirname, "../..");
const HOME = "lib/domain/assessment.ts";

function sources(dir: string): string[] {
  const out: string[] = [];
  for (const e of fs.readdirSync(path.join(ROOT, dir), { withFileTypes: true })) {
    const rel = path.join(dir, e.name);
    if (e.isDirectory()) out.push(...sources(rel));
    else if (/\.(ts|tsx)$/.test(e.name)) out.push(rel.split(path.sep).join("/"));
  }
  return out;
}

/** Every product source file except the numerical core (which defines the per-pole formulas). */
const FILES = ["app", "lib", "server", "models", "simulators"]
  .filter((d) => fs.existsSync(path.join(ROOT, d)))
  .flatMap(sources)
  .filter((f) => !f.startsWith("lib/control/"));

const RULES: { figure: string; pattern: RegExp; allowed: readonly string[] }[] = [
  { figure: "model poles, else data poles", pattern: /modelPoles\.length\s*(>\s*0\s*)?\?\s*[\w.]*modelPoles\s*:/, allowed: [] },
  { figure: "per-cycle decay ratio r^(2π/θ)", pattern: /Math\.pow\([^;]*,\s*\(?\s*2\s*\*\s*Math\.PI\s*\)?\s*\/\s*\w+/, allowed: [] },
  { figure: "decay ratio of a pole", pattern: /\bdecayRatio\s*\(\s*\{?\s*\w+/, allowed: [HOME] },
  { figure: "dominant pole selection", pattern: /function\s+(dominantPole|dominantOscillatingMode|slowestOscillatingMode)\b/, allowed: [HOME] },
  { figure: "pole characteristics of the dominant pole", pattern: /\bpoleCharacteristics(Into)?\s*\(/, allowed: [HOME, "lib/step-tests/identify.ts"] },
  { figure: "Jury verdict", pattern: /\bjuryTest\s*\([^)]*\)\s*\.stable/, allowed: ["server/tracking/figures.ts"] },
];

describe("one home per figure", () => {
  it("finds the product's sources", () => {
    expect(FILES).toContain(HOME);
    expect(FILES.length).toBeGreaterThan(100);
  });
  for (const rule of RULES) {
    it(`${rule.figure} is computed only in ${rule.allowed.join(", ") || "lib/domain/assessment.ts (through its functions)"}`, () => {
      const hits = FILES.filter((f) => !rule.allowed.includes(f) && f !== HOME && rule.pattern.test(fs.readFileSync(path.join(ROOT, f), "utf8")));
      expect(hits).toEqual([]);
    });
  }
  it("the scan recognises the forms it forbids (the rules can fail)", () => {
    expect(RULES[0]!.pattern.test("const p = s.modelPoles.length ? s.modelPoles : s.dataPoles;")).toBe(true);
    expect(RULES[1]!.pattern.test("const d = Math.pow(radius, (2 * Math.PI) / angle);")).toBe(true);
    expect(RULES[3]!.pattern.test("export function dominantPole(poles) {")).toBe(true);
    expect(RULES[5]!.pattern.test("const ok = juryTest(c).stable;")).toBe(true);
    expect(RULES[4]!.pattern.test("const pc = poleCharacteristicsInto(z, T, out);")).toBe(true);
  });
});
