"use client";
/**
 * A loop's routine-data finding as a word with its own small outlined glyph (docs/visual-language.md,
 * "Findings and the work list"): one glyph per finding so shape tells them apart, neutral ink
 * (never the alarm priority colours or marks), never pulsing. Below certain it reads "likely …";
 * a loop that cannot be judged yet says so muted, with the data time still needed.
 * It reads the verdict the loop's assessment carries (`LoopAssessment.routine`, a tile's live
 * summary holds its label, confidence and time still needed); nothing here recomputes it.
 */
import { memo } from "react";
import type { DiagnosisLabel } from "@/lib/assessment/types";
import { findingPhrase, type RoutineBrief, type RoutineFindings } from "@/lib/domain/findings";

/** What a mark shows: the verdict, and where known its reason and evidence (tooltip). */
export type MarkedFinding = Pick<RoutineBrief, "label" | "confidence" | "needsS"> & Partial<Pick<RoutineFindings, "reason" | "evidence">>;

/**
 * Outlined glyphs, 12×12, stroke only, one path each: healthy a ring; aggressive tuning a growing
 * ring-down past the set point; sluggish a slow creep toward the line; stiction stick-slip (flat,
 * jump, flat); an outside disturbance a wave arriving at a box; saturated pinned against a limit;
 * a sensor fault a broken reading; manual an open square (the loop opened by hand).
 */
const GLYPH_PATHS: Record<DiagnosisLabel, string> = {
  healthy: "M2 6 A4 4 0 1 0 10 6 A4 4 0 1 0 2 6",
  "aggressive-tuning": "M1 6 Q2.5 1 4 6 T7 6 T10 6 L11 6",
  "sluggish-tuning": "M1 10 Q4 10 6 7 T11 3",
  "valve-stiction": "M1 9 H4 V3 H8 V9 H11",
  "external-disturbance": "M6.5 2.5 H10.5 V9.5 H6.5 Z M1 6 Q2 3.5 3 6 T5 6",
  saturated: "M1 10 L6 3 H11 M1 2 H11",
  "sensor-fault": "M1 6 H4 M8 6 H11 M5 3 L7 9",
  manual: "M3 3 H9 V9 H3 Z M6 3 V1",
  undetermined: "M2 6 H3 M5.5 6 H6.5 M9 6 H10",
};

function Glyph({ label }: { label: DiagnosisLabel }) {
  return <path d={GLYPH_PATHS[label]} fill="none" stroke="currentColor" strokeWidth={1.4} strokeLinejoin="round" strokeLinecap="round" />;
}

function FindingMarkPlain({ finding, compact = false, big = false }: { finding: MarkedFinding | null | undefined; compact?: boolean; big?: boolean }) {
  if (!finding) return <span className={`${big ? "text-base" : "text-xs"} text-muted`} data-testid="finding-mark" data-finding="none">not judged yet</span>;
  const phrase = findingPhrase(finding);
  const muted = finding.label === "undetermined" || finding.label === "healthy";
  const title = [phrase, ...(finding.reason ? [finding.reason] : []), ...(finding.evidence ?? []).slice(0, 4)].join("\n");
  const px = big ? 16 : 12;
  return (
    <span className={`inline-flex min-w-0 items-center gap-1 whitespace-nowrap ${big ? "text-base" : compact ? "text-xs" : "text-sm"} ${muted ? "text-muted" : "text-ink"}`} title={title} data-testid="finding-mark" data-finding={finding.label}>
      <svg width={px} height={px} viewBox="0 0 12 12" aria-hidden="true" className="shrink-0">
        <Glyph label={finding.label} />
      </svg>
      <span className="truncate">{phrase}</span>
    </span>
  );
}

export const FindingMark = memo(FindingMarkPlain);
