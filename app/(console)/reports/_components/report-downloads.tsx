/** The CSV and PDF download links of a period report, after any links of the page's own. Server component. */
import type { ReactNode } from "react";

export function ReportDownloads({ endpoint, params, csvLabel = "Download CSV", pdfLabel = "Download PDF", children }: { endpoint: string; params: URLSearchParams; csvLabel?: string; pdfLabel?: string; children?: ReactNode }) {
  return (
    <span className="flex gap-2 text-sm">
      {children}
      <a href={`${endpoint}?${params}&format=csv`} download className="rounded border border-line px-2 py-0.5">
        {csvLabel}
      </a>
      <a href={`${endpoint}?${params}&format=pdf`} download className="rounded border border-line px-2 py-0.5">
        {pdfLabel}
      </a>
    </span>
  );
}
