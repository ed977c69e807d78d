/**
 * One document model for every report: the screen, the CSV and the PDF all render the same
 * `ReportDoc`, whose cells are already formatted strings, so the three cannot disagree on a number.
 * Pure and browser-safe.
 */
import { CAUTION_NEVER_WRITES, CAUTION_TEXT } from "@/lib/caution";
import type { Handover } from "./handover";
import { findingWord } from "./score";
import { localParts } from "./shifts";

export interface ReportColumn {
  label: string;
  /** Unit shown in the header, e.g. "h" or "%"; CSV headers read "label [unit]". */
  unit?: string;
  /** Relative width in the PDF (default 1). */
  width?: number;
}

export interface BarChart {
  title: string;
  bars: { label: string; value: number; target?: number }[];
  unit: string;
}

export interface ReportSection {
  id: string;
  title: string;
  /** Lines printed before the table (e.g. a formula or what an empty table means). */
  lines?: string[];
  columns: ReportColumn[];
  rows: string[][];
  /** Said when `rows` is empty. */
  empty?: string;
  chart?: BarChart;
}

export interface ReportDoc {
  kind: "handover" | "worst-loops" | "fleet-health";
  title: string;
  tenant: string;
  /** Human-readable period, e.g. "2026-03-28 22:00 – 2026-03-29 06:00 (Europe/Berlin)". */
  period: string;
  generatedAt: string;
  caution: string;
  sections: ReportSection[];
  /** File name without extension, ASCII. */
  fileName: string;
}

export const REPORT_CAUTION = `${CAUTION_TEXT} ${CAUTION_NEVER_WRITES}`;

const pad = (n: number) => String(n).padStart(2, "0");

/** "2026-03-29 06:00" in a zone. */
export function formatLocal(t: number, timeZone: string): string {
  const p = localParts(t, timeZone);
  return `${p.year}-${pad(p.month)}-${pad(p.day)} ${pad(p.hour)}:${pad(p.minute)}`;
}

/** Fixed decimals, "–" for a missing value (the same string on screen, in CSV and PDF). */
export function formatNumber(v: number | null | undefined, decimals = 2): string {
  return v == null || !Number.isFinite(v) ? "–" : v.toFixed(decimals);
}

export function fileSlug(s: string): string {
  return s.normalize("NFKD").replace(/[^\w-]+/g, "-").replace(/-+/g, "-").replace(/^-|-$/g, "").toLowerCase() || "report";
}

/** The handover as a document. Times in the site's zone. */
export function handoverDocument(h: Handover): ReportDoc {
  const tz = h.site.timeZone;
  const at = (t: number) => formatLocal(t, tz);
  const hours = (h.shift.end - h.shift.start) / 3600_000;
  const k = h.kpis;
  const atEnd = h.inProgress ? "now" : "at the end of the shift";
  return {
    kind: "handover",
    title: `${h.inProgress ? "Shift in progress" : "Shift handover"} — ${h.site.siteName}${h.site.areaName ? ` · ${h.site.areaName}` : ""}`,
    tenant: h.tenantName,
    period: `${at(h.shift.start)} – ${at(h.shift.end)} (${tz}, ${formatNumber(hours, 1)} h)${h.inProgress ? `, as of ${at(h.asOf)}` : ""}`,
    generatedAt: new Date(h.generatedAt).toISOString(),
    caution: REPORT_CAUTION,
    fileName: fileSlug(`handover-${h.site.siteName}${h.site.areaName ? `-${h.site.areaName}` : ""}-${h.shift.localDate}-${h.shift.startsAt.replace(":", "")}`),
    sections: [
      {
        id: "active-alarms",
        title: h.inProgress ? "Alarms active now" : "Alarms active at the end of the shift",
        columns: [{ label: "Priority" }, { label: "Loop" }, { label: "Condition" }, { label: "Active since", width: 1.4 }, { label: "Acknowledged" }, { label: "Acknowledged at", width: 1.4 }],
        rows: h.activeAlarms.map((a) => [a.priority, a.loopTag, a.condition, at(a.startedAt), a.acknowledged ? "yes" : "no", a.acknowledgedAt === null ? "–" : at(a.acknowledgedAt)]),
        empty: `No alarm is active ${atEnd}.`,
      },
      {
        id: "out-of-normal",
        title: `Shelved and out-of-service alarms ${atEnd}`,
        columns: [{ label: "Loop" }, { label: "Condition" }, { label: "State" }, { label: "Reason", width: 2.2 }, { label: "By" }, { label: "Since", width: 1.4 }],
        rows: h.outOfNormal.map((o) => [o.loopTag, o.condition, o.state, o.reason ?? "–", o.by ?? "–", at(o.at)]),
        empty: `No alarm is shelved or out of service ${atEnd}.`,
      },
      {
        id: "state-changes",
        title: "Loops whose verdict or tracker state changed",
        columns: [{ label: "Loop" }, { label: "State at start" }, { label: "State at end" }, { label: "Changes", unit: "count" }, { label: "Verdict at start" }, { label: "Verdict at end" }],
        rows: h.stateChanges.map((c) => [c.loopTag, c.stateAtStart ?? "–", c.stateAtEnd, String(c.changes), c.verdictAtStart, c.verdictAtEnd]),
        empty: "No loop changed its verdict or tracker state during the shift.",
      },
      {
        id: "manual",
        title: `Loops in manual or saturated ${atEnd}`,
        columns: [{ label: "Loop" }, { label: "State" }, { label: "Since", width: 1.4 }],
        rows: h.manualOrSaturated.map((m) => [m.loopTag, m.state, at(m.since)]),
        empty: `No loop is in manual or saturated ${atEnd}.`,
      },
      {
        id: "work-items",
        title: "Work-list items opened during the shift",
        lines: ["Findings from routine data for the loops' engineers (likely causes, not alarms); their owner and status are on the work list."],
        columns: [{ label: "Opened", width: 1.4 }, { label: "Loop" }, { label: "Finding", width: 1.4 }, { label: "Confidence" }, { label: "Evidence", width: 3.2 }],
        rows: h.workItems.map((w) => [at(w.openedAt), w.loopTag, findingWord(w.label), w.confidence.toFixed(2), w.evidence ?? "–"]),
        empty: "No work-list item was opened during the shift.",
      },
      {
        id: "notes",
        title: "Notes of the shift",
        columns: [{ label: "Time", width: 1.3 }, { label: "Author" }, { label: "On" }, { label: "Note", width: 3.5 }],
        rows: h.notes.map((n) => [
          at(n.at),
          n.authorName,
          n.kind === "shift" ? "shift" : `${n.loopTag ?? "loop"}${n.kind === "alarm" ? " (alarm)" : ""}`,
          n.correctsId ? `[corrects note ${n.correctsId}] ${n.text}` : n.text,
        ]),
        empty: "No note was written during the shift.",
      },
      {
        id: "alarm-figures",
        title: "Alarm figures of the shift",
        lines: [
          "Guidance (ANSI/ISA-18.2, EEMUA 191): about 1 alarm per 10 min per operator position is very likely acceptable, 2 is the manageable maximum; a flood is more than 10 in 10 min; priorities about 80 % low, 15 % high, 5 % urgent.",
        ],
        columns: [{ label: "Figure", width: 2.2 }, { label: "Value" }, { label: "Guidance" }],
        rows: [
          ["Alarms (annunciated)", String(k.totalAlarms), "–"],
          ["Average per 10 min", formatNumber(k.overall.averagePer10Min), "<= 1"],
          ["Peak per 10 min", String(k.overall.peakPer10Min), "<= 10"],
          ["Time in flood [%]", formatNumber(k.overall.percentTimeInFlood, 1), "< 1"],
          ["Chattering alarms", String(k.chattering.length), "0"],
          ["Stale alarms (> 24 h)", String(k.stale.length), "< 5"],
          ...k.priority.map((p) => [`Share ${p.priority} [%]`, formatNumber(p.percent, 1), `~ ${p.targetPercent}`]),
        ],
        chart: {
          title: "Priority distribution against guidance",
          unit: "%",
          bars: k.priority.map((p) => ({ label: p.priority, value: p.percent, target: p.targetPercent })),
        },
      },
      {
        id: "confirmations",
        title: "Read by the incoming shift",
        columns: [{ label: "Name" }, { label: "Confirmed at", width: 1.4 }],
        rows: h.confirmations.map((c) => [c.userName, at(c.at)]),
        empty: "Nobody has confirmed reading this handover yet.",
      },
    ],
  };
}
