/** Fleet health as a document (screen, CSV, PDF). Pure and browser-safe. */
import { fileSlug, formatNumber, REPORT_CAUTION, type ReportDoc } from "./document";
import type { FleetHealth } from "./fleet-health";
import { FINDING_WORDS } from "@/lib/domain/findings";
import { DIAGNOSIS_LABELS } from "./score";

/** A diagnosis as the console words it (lib/domain/findings.ts): "sticking valve", "not judged yet". */
const word = (l: (typeof DIAGNOSIS_LABELS)[number]) => FINDING_WORDS[l];

const day = (t: number) => new Date(t).toISOString().slice(0, 10);
const share = (n: number, of: number) => formatNumber(of ? (100 * n) / of : null, 1);

export function fleetHealthDocument(r: FleetHealth): ReportDoc {
  const last = r.buckets.at(-1);
  const scope = [r.filter.site, r.filter.area, r.filter.kind ? `${r.filter.kind} loops` : null].filter((x): x is string => !!x);
  const undetermined = r.buckets.every((b) => (b.counts.undetermined ?? 0) === b.loops);
  return {
    kind: "fleet-health",
    title: `Fleet health${scope.length ? ` — ${scope.join(" · ")}` : ""}`,
    tenant: r.tenantName,
    period: `${day(r.from)} – ${day(r.to - 1)} (UTC days), by ${r.granularity}`,
    generatedAt: new Date(r.generatedAt).toISOString(),
    caution: REPORT_CAUTION,
    fileName: fileSlug(`fleet-health-${[r.tenantName, ...scope].join("-")}-${day(r.from)}-${day(r.to - 1)}`),
    sections: [
      {
        id: "trend",
        title: `Share of loops by diagnosis, per ${r.granularity}`,
        lines: [
          "A loop counts once per period, with the diagnosis of its latest judged day (else 'not judged yet'); loops without data in a period are not counted.",
          ...(undetermined
            ? ["Every loop reads 'not judged yet': no routine-data finding was recorded for these days yet (a summary takes the live assessment's finding of its day). The shares are shown as they are, not guessed."]
            : []),
        ],
        columns: [{ label: r.granularity === "week" ? "Week" : "Month" }, { label: "Loops", unit: "count" }, ...DIAGNOSIS_LABELS.map((l) => ({ label: word(l), unit: "%" }))],
        rows: r.buckets.map((b) => [b.label, String(b.loops), ...DIAGNOSIS_LABELS.map((l) => share(b.counts[l] ?? 0, b.loops))]),
        empty: "No daily summary in this period.",
        chart: last
          ? { title: `${last.label}: share of loops by diagnosis`, unit: "%", bars: DIAGNOSIS_LABELS.map((l) => ({ label: word(l), value: last.loops ? (100 * (last.counts[l] ?? 0)) / last.loops : 0 })) }
          : undefined,
      },
      {
        id: "sites",
        title: `By site, ${last?.label ?? "latest period"}`,
        columns: [{ label: "Site", width: 1.5 }, { label: "Loops", unit: "count" }, ...DIAGNOSIS_LABELS.map((l) => ({ label: word(l), unit: "%" }))],
        rows: r.bySite.map((s) => [s.site, String(s.loops), ...DIAGNOSIS_LABELS.map((l) => share(s.counts[l] ?? 0, s.loops))]),
        empty: "No daily summary in this period.",
      },
    ],
  };
}
