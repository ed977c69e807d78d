import { mkdtemp, rm, writeFile } from "node:fs/promises";
import os from "node:os";
import path from "node:path";
import { afterAll, describe, expect, it } from "vitest";
import { loadScenario, parseScenario, ScenarioError } from "@/simulators/scenario";

const dir = await mkdtemp(path.join(os.tmpdir(), "rg-scenario-"));
afterAll(() => rm(dir, { recursive: true, force: true }));

function problems(value: unknown): string[] {
  try {
    parseScenario(value, "test.json");
  } catch (e) {
    expect(e).toBeInstanceOf(ScenarioError);
    return (e as ScenarioError).problems;
  }
  throw new Error("expected a ScenarioError");
}

describe("scenario files", () => {
  it("accepts a minimal scenario and fills in the default activity", () => {
    const s = parseScenario({ name: "quiet" });
    expect(s.loops).toEqual([]);
    expect(s.activity.noiseSdPct).toBeGreaterThan(0);
    expect(s.activity.setpointEveryS).toBeGreaterThan(0);
  });

  it("names every bad field with its JSON path", () => {
    const p = problems({
      loops: [
        { tag: "FIC-101", drift: [{ kind: "gain-creep", startS: -5, durationS: 60, toFactor: 2 }] },
        { tag: "TIC-201", drift: [{ kind: "melting", startS: 0 }] },
      ],
    });
    expect(p.some((x) => x.startsWith("name:"))).toBe(true);
    expect(p.some((x) => x.startsWith("loops.0.drift.0.startS:"))).toBe(true);
    expect(p.some((x) => x.startsWith("loops.1.drift.0.kind:"))).toBe(true);
  });

  it("refuses a slip jump larger than the stiction band and a tag listed twice", () => {
    const p = problems({
      name: "x",
      loops: [
        { tag: "FV-1", drift: [{ kind: "sticky-valve", startS: 0, stictionPct: 1, slipPct: 2 }] },
        { tag: "FV-1", drift: [] },
      ],
    });
    expect(p).toContain("loops.0.drift.0.slipPct: slipPct must not exceed stictionPct");
    expect(p).toContain("loops.1.tag: tag FV-1 is listed twice");
  });

  it("needs exactly one of toFactor and toHeadroom in a gain creep", () => {
    const both = problems({ name: "x", loops: [{ tag: "A", drift: [{ kind: "gain-creep", startS: 0, durationS: 10, toFactor: 2, toHeadroom: 0.9 }] }] });
    const none = problems({ name: "x", loops: [{ tag: "A", drift: [{ kind: "gain-creep", startS: 0, durationS: 10 }] }] });
    expect(both).toContain("loops.0.drift.0.toFactor: give exactly one of toFactor and toHeadroom");
    expect(none).toContain("loops.0.drift.0.toFactor: give exactly one of toFactor and toHeadroom");
  });

  it("refuses unknown top-level keys, so a typo does not pass silently", () => {
    const p = problems({ name: "x", lops: [] });
    expect(p.join("\n")).toMatch(/lops/);
  });

  it("refuses an inline loop with an inverted range or a non-slug site", () => {
    const p = problems({
      name: "x",
      inlineLoops: [
        {
          tenantSlug: "t",
          siteSlug: "Site One",
          tag: "L-1",
          telemetryPeriodS: 1,
          controllerPeriodS: 1,
          plant: { type: "integrating", gain: 0.05 },
          controller: { kp: 2, ti: 300 },
          pvRange: [100, 0],
        },
      ],
    });
    expect(p.some((x) => x.startsWith("inlineLoops.0.siteSlug:"))).toBe(true);
    expect(p.some((x) => x.startsWith("inlineLoops.0.pvRange:"))).toBe(true);
  });

  it("reports a file that is not JSON, and a missing file, as ScenarioError", async () => {
    const bad = path.join(dir, "bad.json");
    await writeFile(bad, "{ name: nope");
    await expect(loadScenario(bad)).rejects.toThrow(/not valid JSON/);
    await expect(loadScenario(path.join(dir, "missing.json"))).rejects.toThrow(/cannot read the file/);
  });

  it("loads the shipped scenarios", async () => {
    for (const f of ["demo.json", "gain-creep.json", "dead-time-growth.json", "sticky-valve.json", "manual-switch.json", "frozen-sensor.json", "saturation.json"]) {
      const s = await loadScenario(path.join(import.meta.dirname, "../../simulators/scenarios", f));
      expect(s.name.length).toBeGreaterThan(0);
    }
  });
});
