/**
 * PDF of a report document with pdfkit. Fonts: pdfkit's bundled standard Helvetica (AFM metrics,
 * not embedded): the console's own fonts ship only as variable WOFF2 subsets, which pdfkit cannot
 * embed as a whole. Helvetica covers Windows-1252 (Western European text); characters outside it
 * are printed as "?" and the document says so. Every page carries the report, tenant, period,
 * caution and "page i of n"; charts are vector drawings. Node only.
 */
import PDFDocument from "pdfkit";
import type { BarChart, ReportDoc, ReportSection } from "./document";

const A4 = { w: 595.28, h: 841.89 };
/** Columns beyond which a document is printed in landscape (the worst-loops ranking has 15). */
export const LANDSCAPE_COLUMNS = 10;
/** The page of the document being drawn (reportPdf draws synchronously, one document at a time). */
let PAGE = A4;
const M = 40;
const BODY_TOP = 78;
let BODY_BOTTOM = A4.h - 62;
const INK = "#1f2328";
const MUTED = "#5b636d";
const LINE = "#c9ced4";

// Windows-1252 beyond Latin-1 (the characters Helvetica's encoding has in 0x80-0x9F).
const CP1252_EXTRA = new Set("€‚ƒ„…†‡ˆ‰Š‹ŒŽ‘’“”•–—˜™š›œžŸ");
const REPLACE: Record<string, string> = { "≤": "<=", "≥": ">=", "≈": "~", "→": "->", "−": "-", "×": "x", "\u00A0": " " };

/** Text Helvetica can print: known look-alikes substituted, anything else outside CP1252 as "?". */
export function printable(s: string): string {
  let out = "";
  for (const ch of s) {
    const r = REPLACE[ch];
    if (r !== undefined) out += r;
    else if (ch === "\n" || ch === "\t") out += " ";
    else out += ch.charCodeAt(0) < 0x100 || CP1252_EXTRA.has(ch) ? ch : "?";
  }
  return out;
}

function header(doc: PDFKit.PDFDocument, r: ReportDoc): void {
  doc.font("Helvetica-Bold").fontSize(13).fillColor(INK).text(printable(r.title), M, 30, { width: PAGE.w - 2 * M, lineBreak: false });
  doc.font("Helvetica").fontSize(8.5).fillColor(MUTED).text(printable(`${r.tenant} · ${r.period}`), M, 50, { width: PAGE.w - 2 * M, lineBreak: false });
  doc.moveTo(M, 66).lineTo(PAGE.w - M, 66).lineWidth(0.5).strokeColor(LINE).stroke();
}

function footer(doc: PDFKit.PDFDocument, r: ReportDoc, page: number, pages: number): void {
  // Below the body's margin: without this pdfkit would start a new page for the footer text.
  doc.page.margins.bottom = 0;
  doc.moveTo(M, PAGE.h - 54).lineTo(PAGE.w - M, PAGE.h - 54).lineWidth(0.5).strokeColor(LINE).stroke();
  doc.font("Helvetica").fontSize(7).fillColor(MUTED);
  doc.text(printable(r.caution), M, PAGE.h - 48, { width: PAGE.w - 2 * M - 70, lineBreak: true, height: 24 });
  doc.text(`page ${page} of ${pages}`, PAGE.w - M - 65, PAGE.h - 48, { width: 65, align: "right", lineBreak: false });
}

function ensure(doc: PDFKit.PDFDocument, r: ReportDoc, height: number): void {
  if (doc.y + height > BODY_BOTTOM) {
    doc.addPage();
    header(doc, r);
    doc.y = BODY_TOP;
  }
}

function drawChart(doc: PDFKit.PDFDocument, r: ReportDoc, c: BarChart): void {
  const h = 18 * c.bars.length + 26;
  ensure(doc, r, h);
  const x0 = M + 110;
  const width = PAGE.w - 2 * M - 170;
  const max = Math.max(1, ...c.bars.map((b) => Math.max(b.value, b.target ?? 0)));
  let y = doc.y;
  doc.font("Helvetica-Bold").fontSize(8.5).fillColor(INK).text(printable(c.title), M, y, { lineBreak: false });
  y += 14;
  for (const b of c.bars) {
    doc.font("Helvetica").fontSize(8).fillColor(INK).text(printable(b.label), M, y + 2, { width: 105, lineBreak: false });
    doc.rect(x0, y, width, 12).lineWidth(0.4).strokeColor(LINE).stroke();
    doc.rect(x0, y, (width * Math.max(0, b.value)) / max, 12).fillColor("#4a6b8a").fill();
    if (b.target !== undefined) {
      const tx = x0 + (width * b.target) / max;
      doc.moveTo(tx, y - 2).lineTo(tx, y + 14).lineWidth(1.2).strokeColor(INK).stroke();
    }
    doc.fillColor(INK).text(`${b.value.toFixed(1)} ${c.unit}${b.target !== undefined ? ` (guide ${b.target})` : ""}`, x0 + width + 6, y + 2, { lineBreak: false });
    y += 18;
  }
  doc.y = y + 6;
}

function drawSection(doc: PDFKit.PDFDocument, r: ReportDoc, s: ReportSection): void {
  ensure(doc, r, 60);
  doc.font("Helvetica-Bold").fontSize(10.5).fillColor(INK).text(printable(s.title), M, doc.y, { width: PAGE.w - 2 * M });
  doc.moveDown(0.3);
  for (const line of s.lines ?? []) {
    doc.font("Helvetica").fontSize(8).fillColor(MUTED).text(printable(line), M, doc.y, { width: PAGE.w - 2 * M });
    doc.moveDown(0.2);
  }
  if (s.chart) drawChart(doc, r, s.chart);
  if (!s.rows.length) {
    doc.font("Helvetica-Oblique").fontSize(8.5).fillColor(MUTED).text(printable(s.empty ?? "None."), M, doc.y, { width: PAGE.w - 2 * M });
    doc.moveDown(0.8);
    return;
  }
  const total = s.columns.reduce((a, c) => a + (c.width ?? 1), 0);
  const widths = s.columns.map((c) => ((PAGE.w - 2 * M) * (c.width ?? 1)) / total);
  const drawRow = (cells: string[], bold: boolean) => {
    doc.font(bold ? "Helvetica-Bold" : "Helvetica").fontSize(7.8);
    const texts = cells.map((c) => printable(c));
    const hgt = Math.max(11, ...texts.map((t, i) => doc.heightOfString(t, { width: widths[i]! - 4 }))) + 3;
    ensure(doc, r, hgt);
    const y = doc.y;
    let x = M;
    texts.forEach((t, i) => {
      doc.fillColor(INK).text(t, x + 2, y + 1.5, { width: widths[i]! - 4 });
      x += widths[i]!;
    });
    doc.moveTo(M, y + hgt).lineTo(PAGE.w - M, y + hgt).lineWidth(0.3).strokeColor(LINE).stroke();
    doc.x = M;
    doc.y = y + hgt;
  };
  const head = s.columns.map((c) => (c.unit ? `${c.label} [${c.unit}]` : c.label));
  drawRow(head, true);
  for (const row of s.rows) {
    if (doc.y + 14 > BODY_BOTTOM) {
      ensure(doc, r, 1000);
      drawRow(head, true);
    }
    drawRow(row, false);
  }
  doc.moveDown(0.9);
}

/** Render a report document to PDF bytes. */
export function reportPdf(r: ReportDoc): Promise<Buffer> {
  const landscape = r.sections.some((s) => s.columns.length > LANDSCAPE_COLUMNS);
  PAGE = landscape ? { w: A4.h, h: A4.w } : A4;
  BODY_BOTTOM = PAGE.h - 62;
  const doc = new PDFDocument({ size: "A4", layout: landscape ? "landscape" : "portrait", margins: { top: BODY_TOP, bottom: 40, left: M, right: M }, bufferPages: true, info: { Title: printable(r.title), Author: "Rimguard", Subject: printable(`${r.tenant} · ${r.period}`) } });
  const chunks: Buffer[] = [];
  doc.on("data", (c: Buffer) => chunks.push(c));
  const done = new Promise<Buffer>((resolve, reject) => {
    doc.on("end", () => resolve(Buffer.concat(chunks)));
    doc.on("error", reject);
  });
  header(doc, r);
  doc.y = BODY_TOP;
  for (const s of r.sections) drawSection(doc, r, s);
  const range = doc.bufferedPageRange();
  for (let i = range.start; i < range.start + range.count; i++) {
    doc.switchToPage(i);
    footer(doc, r, i + 1, range.count);
  }
  doc.end();
  return done;
}
