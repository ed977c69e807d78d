/** A report as a download: CSV (UTF-8 with BOM) or PDF, with a file name from the document. Node only. */
import { reportCsv } from "./csv";
import type { ReportDoc } from "./document";
import { reportPdf } from "./pdf";

export type ReportFormat = "csv" | "pdf";

export async function documentResponse(doc: ReportDoc, format: ReportFormat): Promise<Response> {
  if (format === "csv") {
    return new Response(reportCsv(doc), {
      headers: { "content-type": "text/csv; charset=utf-8", "content-disposition": `attachment; filename="${doc.fileName}.csv"`, "cache-control": "no-store" },
    });
  }
  const pdf = await reportPdf(doc);
  return new Response(new Uint8Array(pdf), {
    headers: { "content-type": "application/pdf", "content-disposition": `attachment; filename="${doc.fileName}.pdf"`, "cache-control": "no-store" },
  });
}
