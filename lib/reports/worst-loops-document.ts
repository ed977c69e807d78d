/** The worst-loops report as a document (screen, CSV, PDF). Pure and browser-safe. */
import { fileSlug, formatNumber, REPORT_CAUTION, type ReportDoc } from "./document";
import { FINDING_WORDS, findingPhrase } from "@/lib/domain/findings";
import { findingWord, SCORE_FORMULA_LINES, type DiagnosisLabel } from "./score";
import { TODAY_REBUILD_MINUTES } from "./summaries";
import type { WorstLoopsReport } from "./worst-loops";

const pct = (v: number | null) => formatNumber(v == null ? null : 100 * v, 1);
const day = (t: number) => new Date(t).toISOString().slice(0, 10);

export function trendWord(score: number, previous: number | null): string {
  if (previous === null) return "new";
  const d = score - previous;
  if (Math.abs(d) < 2) return "steady";
  return d > 0 ? `worse (+${d.toFixed(1)})` : `better (${d.toFixed(1)})`;
}

/** `limit`: only the first rows (the PDF holds the top 50; the CSV the full ranking). */
export function worstLoopsDocument(r: WorstLoopsReport, opts: { limit?: number } = {}): ReportDoc {
  const rows = opts.limit ? r.rows.slice(0, opts.limit) : r.rows;
  const filters = [r.filter.site && `site ${r.filter.site}`, r.filter.area && `area ${r.filter.area}`, r.filter.kind && `kind ${r.filter.kind}`].filter(Boolean).join(", ");
  const undetermined = r.rows.filter((x) => x.figures.diagnosisLabel === "undetermined").length;
  return {
    kind: "worst-loops",
    title: "Worst loops",
    tenant: r.tenantName,
    period: `${day(r.from)} – ${day(r.to - 1)} (UTC days)${filters ? ` · ${filters}` : ""}`,
    generatedAt: new Date(r.generatedAt).toISOString(),
    caution: REPORT_CAUTION,
    fileName: fileSlug(`worst-loops-${r.tenantName}-${day(r.from)}-${day(r.to - 1)}`),
    sections: [
      {
        id: "ranking",
        title: opts.limit && r.rows.length > opts.limit ? `Ranking (top ${opts.limit} of ${r.rows.length}; the CSV holds all)` : `Ranking (${r.rows.length} loops)`,
        lines: [
          ...SCORE_FORMULA_LINES,
          `Trend: against the previous period of the same length. ${r.withoutData} loop(s) of the filter had no data in the period. ${undetermined} of ${r.rows.length} loop(s) not judged yet. Diagnosis: that of the latest judged day, with its confidence. Work item: the loop's work-list items still open or in work now, with their owner. Today's figures are rebuilt every ${TODAY_REBUILD_MINUTES} minutes, so today's diagnosis can lag the loop's live finding by that much.`,
        ],
        columns: [
          { label: "Rank", width: 0.55 },
          { label: "Loop", width: 1.0 },
          { label: "Site", width: 1.2 },
          { label: "Area", width: 1.2 },
          { label: "Kind", width: 1.1 },
          { label: "Criticality", unit: "1-5", width: 0.6 },
          { label: "Score", width: 0.6 },
          { label: "Trend", width: 0.8 },
          { label: "Decay ratio mean", width: 0.7 },
          { label: "Service factor", unit: "%", width: 0.7 },
          { label: "Saturated", unit: "%", width: 0.7 },
          { label: "In alarm", unit: "%", width: 0.7 },
          { label: "Diagnosis", width: 2.0 },
          { label: "Evidence", width: 2.4 },
          { label: "Work item", width: 1.4 },
        ],
        rows: rows.map((x) => [
          String(x.rank),
          x.tag,
          x.site,
          x.area ?? "–",
          x.kind,
          String(x.criticality),
          formatNumber(x.score, 1),
          trendWord(x.score, x.previousScore),
          formatNumber(x.figures.decayRatioMean, 2),
          pct(x.figures.serviceFactor),
          pct(x.figures.saturationShare),
          pct(x.figures.alarmShare),
          diagnosisCell(x.figures.diagnosisLabel, x.figures.diagnosisConfidence),
          x.evidence.join("; ") || "no figure above its threshold",
          x.workItems.map(workItemCell).join("; ") || "–",
        ]),
        empty: "No loop of this filter has a daily summary in the period.",
      },
    ],
  };
}

/** "likely sticking valve (0.90)", as the console words a finding; "not judged yet" without one. */
export function diagnosisCell(label: string, confidence: number | null): string {
  if (!(label in FINDING_WORDS)) return label;
  const l = label as DiagnosisLabel;
  if (l === "undetermined") return FINDING_WORDS.undetermined;
  const phrase = findingPhrase({ label: l, confidence: confidence ?? 0, needsS: null });
  return confidence === null ? phrase : `${phrase} (${formatNumber(confidence, 2)})`;
}

/** "sticking valve, in work (Dana Keswick)". */
function workItemCell(w: { label: string; status: string; owner: string | null }): string {
  return `${findingWord(w.label)}, ${w.status === "in-work" ? "in work" : w.status}${w.owner ? ` (${w.owner})` : ""}`;
}
