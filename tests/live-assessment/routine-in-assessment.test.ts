/**
 * The live assessor's verdict rides in the one assessment the tracker publishes
 * (`LoopAssessment.routine`, lib/domain/assessment.ts): attached through the registry, published
 * at once on `tracker:update`, carried by every later state, kept across a relearn and a replaced
 * tracker, and summarised for `loop:state` (label, confidence, time still needed). Demo loop
 * PIC-1202 (its simulator from simulators/scenarios/demo.json) supplies real tracker states.
 */
import { describe, expect, it } from "vitest";
import type { RoutineFindings } from "@/lib/domain/findings";
import type { LoopStateDto } from "@/lib/domain/types";
import { toLoopBrief } from "@/server/realtime/summary";
import { startDemoRun } from "../tracking/demo-harness";

const routine = (label: RoutineFindings["label"], at: number): RoutineFindings => ({
  at,
  label,
  confidence: 0.8,
  needsS: null,
  reason: null,
  evidence: [`likely ${label}`],
  windowS: 600,
  oscillationPeriodS: label === "valve-stiction" ? 12 : null,
  harrisIndex: null,
  stiction: label === "valve-stiction" ? "likely" : "unlikely",
  sharedOscillation: null,
});

describe("the routine verdict in the loop's assessment", () => {
  it("is published at once, carried by later states, kept across a relearn, dropped with the loop", async () => {
    const run = await startDemoRun({ tags: ["PIC-1202"] });
    const id = run.ids.get("PIC-1202")!;
    run.advanceTo(60);
    const published = () => run.states.get(id) ?? [];
    const before = published().length;
    expect(published().at(-1)?.routine).toBeUndefined();

    const r = routine("valve-stiction", run.clock.now());
    run.registry.attachRoutine(id, r);
    const now: LoopStateDto = published().at(-1)!;
    expect(published().length).toBe(before + 1);
    expect(now.routine).toEqual(r);
    expect(run.registry.get(id)!.current.routine).toEqual(r);
    // the figures of that state are the tracker's, unchanged by the attachment
    expect(now.spectralRadius).toBe(published()[before - 1]!.spectralRadius);

    run.advanceTo(120);
    const later = published().slice(before + 1);
    expect(later.length).toBeGreaterThan(0);
    for (const s of later) expect(s.routine).toEqual(r);
    expect(toLoopBrief(later.at(-1)!).routine).toEqual({ at: r.at, label: "valve-stiction", confidence: 0.8, needsS: null });

    // a new structure relearns with a new tracker: the verdict stays with the loop
    const cfg = run.registry.get(id)!.config;
    expect(run.registry.upsertLoop({ ...cfg, na: cfg.na + 1 })).toBe("relearn");
    expect(run.registry.get(id)!.current.routine).toEqual(r);

    // a newer verdict replaces it
    const r2 = routine("healthy", run.clock.now());
    run.registry.attachRoutine(id, r2);
    expect(published().at(-1)!.routine).toEqual(r2);

    // a removed loop forgets it: added again, it waits for its next assessment
    run.registry.removeLoop(id);
    expect(run.registry.upsertLoop(cfg)).toBe("added");
    expect(run.registry.get(id)!.current.routine).toBeUndefined();
  });
});
