/**
 * CSV of a report document through csv-stringify (RFC 4180 quoting: fields with commas, quotes or
 * line breaks are quoted, quotes doubled). UTF-8 with a byte-order mark: spreadsheet programs that
 * otherwise guess a legacy code page then read the tenant's names (accents, non-Latin scripts)
 * correctly; CSV readers that know UTF-8 skip the mark. Headers carry units as "label [unit]".
 * A document with several sections writes each as its own block: a title line, the header, the
 * rows, and a blank line.
 */
import { stringify } from "csv-stringify/sync";
import type { ReportDoc, ReportSection } from "./document";

export const UTF8_BOM = "\uFEFF";

export function headerOf(section: ReportSection): string[] {
  return section.columns.map((c) => (c.unit ? `${c.label} [${c.unit}]` : c.label));
}

export function reportCsv(doc: ReportDoc, opts: { sections?: string[] } = {}): string {
  const records: string[][] = [
    [doc.title],
    ["Tenant", doc.tenant],
    ["Period", doc.period],
    ["Generated (UTC)", doc.generatedAt],
    ["Caution", doc.caution],
    [],
  ];
  for (const s of doc.sections) {
    if (opts.sections && !opts.sections.includes(s.id)) continue;
    records.push([s.title]);
    for (const line of s.lines ?? []) records.push([line]);
    records.push(headerOf(s), ...s.rows, []);
  }
  return UTF8_BOM + stringify(records, { record_delimiter: "\r\n"});
}
