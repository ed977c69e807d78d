/**
 * Loop-detail cosmetics. Wording of a finding wherever it is shown (tiles, loop detail, work list, e-mail subject): a
 * cause inferred from routine data reads "likely …" at any confidence — aggressive tuning at
 * confidence 0.95 included — while what the data shows directly may read plain when certain.
 * Common practice in performance-monitoring reports (an inference is worded as one); no source.
 * The timeline collapses an alarm's repeated rows (e.g. "suppressed by design" written again at
 * each flicker of the tracker state) into one with a count.
 */
import { describe, expect, it } from "vitest";
import { findingPhrase } from "@/lib/domain/findings";
import { collapseRepeats, type TimelineItem } from "@/lib/reports/timeline";

describe("finding wording", () => {
  it("inferred causes always read 'likely', observed states read plain when certain", () => {
    expect(findingPhrase({ label: "aggressive-tuning", confidence: 0.95, needsS: null })).toBe("likely aggressive tuning");
    expect(findingPhrase({ label: "aggressive-tuning", confidence: 0.7, needsS: null })).toBe("likely aggressive tuning");
    expect(findingPhrase({ label: "sluggish-tuning", confidence: 1, needsS: null })).toBe("likely sluggish tuning");
    expect(findingPhrase({ label: "valve-stiction", confidence: 0.99, needsS: null })).toBe("likely sticking valve");
    expect(findingPhrase({ label: "saturated", confidence: 0.95, needsS: null })).toBe("saturation");
    expect(findingPhrase({ label: "manual", confidence: 0.5, needsS: null })).toBe("likely in manual");
    expect(findingPhrase({ label: "healthy", confidence: 0.5, needsS: null })).toBe("healthy");
  });
});

describe("timeline repeats", () => {
  const row = (at: number, kind: TimelineItem["kind"], title: string, refId: number | null = 7): TimelineItem => ({ kind, at, title, detail: null, who: null, refId });
  it("collapses an alarm's repeated 'suppressed by design' rows across tracker-state flicker, newest kept", () => {
    const items = [
      row(900, "alarm", "margin alarm suppressed by design"),
      row(800, "state", "tracker state low-excitation -> tracking", null),
      row(700, "alarm", "margin alarm suppressed by design"),
      row(600, "state", "tracker state tracking -> low-excitation", null),
      row(500, "alarm", "margin alarm suppressed by design"),
      row(400, "alarm", "margin alarm raised"),
      row(300, "alarm", "margin alarm suppressed by design"),
      row(200, "alarm", "rim alarm suppressed by design", 8),
    ];
    const out = collapseRepeats(items);
    expect(out.map((i) => [i.at, i.repeats ?? 1])).toEqual([
      [900, 3],
      [800, 1],
      [600, 1],
      [400, 1],
      [300, 1],
      [200, 1],
    ]);
    expect(out[0]!.firstAt).toBe(500);
    expect(items[0]!.repeats).toBeUndefined(); // the input is not changed
  });
});
