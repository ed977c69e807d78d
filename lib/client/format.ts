/** Number and time formatting for instruments: fixed decimals, units always shown. */
export function fmt(v: number | null | undefined, digits = 3): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return "—";
  return v.toFixed(digits);
}

export function fmtSeconds(s: number | null | undefined): string {
  if (s === null || s === undefined || !Number.isFinite(s)) return "—";
  const a = Math.abs(s);
  if (a < 1) return `${(s * 1000).toFixed(0)} ms`;
  if (a < 120) return `${s.toFixed(a < 10 ? 1 : 0)} s`;
  if (a < 7200) return `${(s / 60).toFixed(1)} min`;
  if (a < 172800) return `${(s / 3600).toFixed(1)} h`;
  return `${(s / 86400).toFixed(1)} d`;
}

export function fmtAge(ageS: number | null): string {
  if (ageS === null) return "no data";
  if (ageS < 1) return "now";
  return `${fmtSeconds(ageS)} ago`;
}

export function fmtTime(iso: string | number | null | undefined): string {
  if (iso === null || iso === undefined) return "—";
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return "—";
  return d.toISOString().replace("T", " ").slice(0, 19) + " UTC";
}

/** Compact UTC stamp for tables: "12-01 22:11:36". */
export function fmtStamp(iso: string | number | null | undefined): string {
  if (iso === null || iso === undefined) return "—";
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return "—";
  return d.toISOString().slice(5, 19).replace("T", " ");
}

export function fmtClock(iso: string | number | null | undefined): string {
  if (iso === null || iso === undefined) return "—";
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return "—";
  return d.toISOString().slice(11, 16);
}

export const ALARM_STATE_WORDS: Record<string, string> = {
  normal: "normal",
  unacknowledged: "unacknowledged",
  acknowledged: "acknowledged",
  "rtn-unacknowledged": "cleared, unacknowledged",
  shelved: "shelved",
  "suppressed-by-design": "suppressed by design",
  "out-of-service": "out of service",
};

export const CONDITION_WORDS: Record<string, string> = {
  unstable: "unstable",
  margin: "low margin",
  "rim-forecast": "rim forecast",
  // Retired operator alarm condition (history only): a slow response is a work-list finding now.
  sluggish: "sluggish (retired: now a work-list finding)",
};
