/**
 * Time cells of a CSV export: plain decimal numbers and ISO 8601 date-times with a zone, checked field by field (the platform's Date.parse rolls 30 February over into March and
 * reads a date-time without a zone as local time; neither may pass unnoticed).
 */

/** A plain decimal number (sign, digits, one point, exponent): no hex, no Infinity, no blanks inside. */
export function isPlainNumber(s: string): boolean {
  const n = s.length;
  let i = 0;
  let c = s.charCodeAt(0);
  if (c === 43 || c === 45) i++;
  let digits = 0;
  let point = false;
  for (; i < n; i++) {
    c = s.charCodeAt(i);
    if (c >= 48 && c <= 57) digits++;
    else if (c === 46 && !point) point = true;
    else break;
  }
  if (digits === 0) return false;
  if (i === n) return true;
  if (c !== 101 && c !== 69) return false;
  i++;
  c = s.charCodeAt(i);
  if (c === 43 || c === 45) i++;
  const start = i;
  for (; i < n; i++) {
    c = s.charCodeAt(i);
    if (c < 48 || c > 57) return false;
  }
  return i > start;
}

/** Units a header may give the time column, in seconds. */
export const TIME_UNITS: Record<string, number> = {
  s: 1, sec: 1, secs: 1, second: 1, seconds: 1,
  ms: 0.001, msec: 0.001, millisecond: 0.001, milliseconds: 0.001,
  min: 60, minute: 60, minutes: 60,
  h: 3600, hr: 3600, hour: 3600, hours: 3600,
  d: 86400, day: 86400, days: 86400,
};

/**
 * A time without a unit this large is not seconds of a recording (1e11 s is 3,000 years): it is
 * milliseconds since 1970 (1e11 ms is March 1973, 1e14 ms the year 5138). Larger needs a unit.
 */
export const EPOCH_MS_FROM = 1e11;
export const EPOCH_MS_TO = 1e14;

const ISO_FULL = /^(\d{4})-(\d{2})-(\d{2})[Tt ](\d{2}):(\d{2})(?::(\d{2})(?:[.,](\d{1,9}))?)?\s*(Z|UTC|GMT|[+-]\d{2}(?::?\d{2})?)$/i;
const ISO_NO_ZONE = /^\d{4}-\d{2}-\d{2}[Tt ]\d{2}:\d{2}(:\d{2}([.,]\d+)?)?$/;

/**
 * Seconds of an ISO 8601 date-time without a zone read as a clock time (as if it were UTC: right
 * spacing, the absolute time off by the zone's offset), null when `raw` is not one.
 */
export function parseClockSeconds(raw: string): number | string | null {
  return ISO_NO_ZONE.test(raw.trim()) ? parseIsoSeconds(`${raw.trim()}Z`) : null;
}

const daysIn = (y: number, m: number) => (m === 2 ? (y % 4 === 0 && (y % 100 !== 0 || y % 400 === 0) ? 29 : 28) : [4, 6, 9, 11].includes(m) ? 30 : 31);

/**
 * Seconds since 1970 of an ISO 8601 date-time with a zone (Z, UTC, +hh, +hhmm, +hh:mm; a space
 * may stand for T; fractional seconds with a point or comma), or a sentence saying what is wrong.
 */
export function parseIsoSeconds(raw: string): number | string {
  const m = ISO_FULL.exec(raw);
  if (!m) {
    return ISO_NO_ZONE.test(raw)
      ? "is a date-time without a zone (local times repeat when clocks go back); export with Z or an offset such as +01:00"
      : "is neither seconds nor an ISO 8601 date-time with a zone";
  }
  const [y, mo, d, h, mi] = [1, 2, 3, 4, 5].map((k) => Number(m[k]));
  const s = m[6] === undefined ? 0 : Number(m[6]);
  const frac = m[7] === undefined ? 0 : Number(`0.${m[7]}`);
  const endOfDay = h === 24 && mi === 0 && s === 0 && frac === 0;
  if (mo! < 1 || mo! > 12 || d! < 1 || d! > daysIn(y!, mo!)) return "has no such date";
  if ((h! > 23 && !endOfDay) || mi! > 59 || s > 59) return s === 60 ? "is a leap second, which cannot be placed on the time axis" : "has no such time of day";
  let offsetMin = 0;
  const zone = m[8]!.toUpperCase();
  if (zone !== "Z" && zone !== "UTC" && zone !== "GMT") {
    const oh = Number(zone.slice(1, 3));
    const om = zone.length > 3 ? Number(zone.slice(-2)) : 0;
    if (oh > 18 || om > 59) return "has no such zone offset";
    offsetMin = (zone[0] === "-" ? -1 : 1) * (60 * oh + om);
  }
  return Date.UTC(y!, mo! - 1, d!, h!, mi!, s) / 1000 + frac - 60 * offsetMin;
}
