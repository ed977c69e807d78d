/**
 * Shift arithmetic in a site's time zone. Pure and browser-safe (Intl only, no I/O).
 *
 * A site's shifts start at fixed local wall-clock times ("06:00,14:00,22:00" by default). On a
 * daylight-saving day a shift keeps its local start and end, so its length in hours changes: in
 * Europe/Berlin the night shift 22:00 -> 06:00 into 2026-03-29 lasts 7 h and into 2026-10-25 9 h.
 * A local start that falls into a spring-forward gap begins at the first instant after the gap; one
 * that occurs twice in the autumn begins at its first occurrence (common practice for wall-clock
 * schedules; no source).
 */

export const DEFAULT_SHIFT_STARTS = "06:00,14:00,22:00";

export interface Shift {
  /** Epoch ms, inclusive. */
  start: number;
  /** Epoch ms, exclusive. */
  end: number;
  /** Local date of the shift's start, YYYY-MM-DD. */
  localDate: string;
  /** Local start time, HH:MM. */
  startsAt: string;
  /** Local end time, HH:MM. */
  endsAt: string;
  /** 0-based index of the shift within its local day. */
  index: number;
}

/** Parse "06:00,14:00,22:00" into sorted minutes of the day; throws a readable error on bad input. */
export function parseShiftStarts(spec: string | null | undefined): number[] {
  const text = (spec ?? "").trim() || DEFAULT_SHIFT_STARTS;
  const out: number[] = [];
  for (const part of text.split(",")) {
    const m = /^\s*([01]?\d|2[0-3]):([0-5]\d)\s*$/.exec(part);
    if (!m) throw new Error(`Shift start "${part.trim()}" is not a time of day HH:MM (00:00-23:59).`);
    out.push(Number(m[1]) * 60 + Number(m[2]));
  }
  const sorted = [...new Set(out)].sort((a, b) => a - b);
  if (sorted.length !== out.length) throw new Error("Shift starts must be different times.");
  return sorted;
}

/** A shift shorter than this is a typing slip, not a shift (our rule). */
export const MIN_SHIFT_MINUTES = 60;
export const MAX_SHIFTS = 6;

/**
 * What is wrong with a list of local shift starts as typed ("HH:MM", earliest first), one message
 * per problem with the index it concerns; empty when the list is good. Browser-safe: the settings
 * form and the server check the same rules.
 */
export function shiftStartProblems(starts: readonly string[]): { index: number; message: string }[] {
  const out: { index: number; message: string }[] = [];
  if (starts.length === 0) return [{ index: 0, message: "Give at least one shift start." }];
  if (starts.length > MAX_SHIFTS) out.push({ index: MAX_SHIFTS, message: `At most ${MAX_SHIFTS} shifts a day.` });
  const mins: number[] = [];
  starts.forEach((t, i) => {
    const m = /^([01]\d|2[0-3]):([0-5]\d)$/.exec(t.trim());
    if (!m) out.push({ index: i, message: `"${t}" is not a time of day HH:MM (00:00-23:59).` });
    else mins.push(Number(m[1]) * 60 + Number(m[2]));
  });
  if (out.length) return out;
  for (let i = 1; i < mins.length; i++) {
    if (mins[i] === mins[i - 1]) out.push({ index: i, message: `${starts[i]} is given twice: shift starts must be different times.` });
    else if (mins[i]! < mins[i - 1]!) out.push({ index: i, message: "List the shift starts in the order of the day (earliest first)." });
  }
  if (out.length || mins.length < 2) return out;
  mins.forEach((m, i) => {
    const len = (mins[(i + 1) % mins.length]! - m + 1440) % 1440;
    if (len < MIN_SHIFT_MINUTES) out.push({ index: i, message: `The shift from ${starts[i]} would last ${len} min; a shift lasts at least ${MIN_SHIFT_MINUTES} min.` });
  });
  return out;
}

export function formatMinutes(min: number): string {
  return `${String(Math.floor(min / 60)).padStart(2, "0")}:${String(min % 60).padStart(2, "0")}`;
}

const formatters = new Map<string, Intl.DateTimeFormat>();
function formatter(timeZone: string): Intl.DateTimeFormat {
  let f = formatters.get(timeZone);
  if (!f) {
    f = new Intl.DateTimeFormat("en-US", {
      timeZone,
      hourCycle: "h23",
      year: "numeric",
      month: "2-digit",
      day: "2-digit",
      hour: "2-digit",
      minute: "2-digit",
      second: "2-digit",
    });
    formatters.set(timeZone, f);
  }
  return f;
}

export interface LocalParts {
  year: number;
  month: number;
  day: number;
  hour: number;
  minute: number;
  second: number;
}

/** Wall-clock parts of an instant in a zone. */
export function localParts(t: number, timeZone: string): LocalParts {
  const p: Record<string, number> = {};
  for (const part of formatter(timeZone).formatToParts(new Date(t))) {
    if (part.type !== "literal") p[part.type] = Number(part.value);
  }
  return { year: p.year!, month: p.month!, day: p.day!, hour: p.hour! % 24, minute: p.minute!, second: p.second! };
}

/** The zone's offset from UTC at an instant, in ms (Berlin in summer: +7 200 000). */
export function zoneOffsetMs(t: number, timeZone: string): number {
  const p = localParts(t, timeZone);
  const asUtc = Date.UTC(p.year, p.month - 1, p.day, p.hour, p.minute, p.second);
  return asUtc - (t - (((t % 1000) + 1000) % 1000));
}

/**
 * The instant of a local wall-clock time. In a gap (spring forward) the first instant after it;
 * when the time occurs twice (fall back) the first occurrence.
 */
export function zonedTimeToUtc(year: number, month: number, day: number, minuteOfDay: number, timeZone: string): number {
  const wall = Date.UTC(year, month - 1, day, 0, minuteOfDay);
  // Candidates from the offsets a few hours either side; keep those that map back to `wall`.
  const offsets = new Set([zoneOffsetMs(wall - 12 * 3600_000, timeZone), zoneOffsetMs(wall + 12 * 3600_000, timeZone), zoneOffsetMs(wall, timeZone)]);
  const exact = [...offsets].map((o) => wall - o).filter((t) => wall - t === zoneOffsetMs(t, timeZone));
  if (exact.length) return Math.min(...exact);
  // In a gap: the instant the clock jumps (offsets change on whole minutes; binary search).
  const before = zoneOffsetMs(wall - 12 * 3600_000, timeZone);
  let lo = Math.floor((wall - Math.max(...offsets)) / 60_000);
  let hi = Math.ceil((wall - Math.min(...offsets)) / 60_000);
  while (hi - lo > 1) {
    const mid = Math.floor((lo + hi) / 2);
    if (zoneOffsetMs(mid * 60_000, timeZone) === before) lo = mid;
    else hi = mid;
  }
  return hi * 60_000;
}

function addDays(y: number, m: number, d: number, n: number): [number, number, number] {
  const dt = new Date(Date.UTC(y, m - 1, d + n));
  return [dt.getUTCFullYear(), dt.getUTCMonth() + 1, dt.getUTCDate()];
}

const iso = (y: number, m: number, d: number) => `${y}-${String(m).padStart(2, "0")}-${String(d).padStart(2, "0")}`;

/** The shifts whose start falls on a local date (YYYY-MM-DD), in order. */
export function shiftsOfDay(localDate: string, timeZone: string, starts: number[]): Shift[] {
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(localDate);
  if (!m) throw new Error(`"${localDate}" is not a date YYYY-MM-DD.`);
  const [y, mo, d] = [Number(m[1]), Number(m[2]), Number(m[3])];
  const [ny, nm, nd] = addDays(y, mo, d, 1);
  return starts.map((s, i) => {
    const next = starts[i + 1];
    const end = next === undefined ? zonedTimeToUtc(ny, nm, nd, starts[0]!, timeZone) : zonedTimeToUtc(y, mo, d, next, timeZone);
    return {
      start: zonedTimeToUtc(y, mo, d, s, timeZone),
      end,
      localDate: iso(y, mo, d),
      startsAt: formatMinutes(s),
      endsAt: formatMinutes(next ?? starts[0]!),
      index: i,
    };
  });
}

/** The shift that contains instant `t`. */
export function shiftAt(t: number, timeZone: string, starts: number[]): Shift {
  const p = localParts(t, timeZone);
  for (const offset of [0, -1, 1]) {
    const [y, m, d] = addDays(p.year, p.month, p.day, offset);
    const hit = shiftsOfDay(iso(y, m, d), timeZone, starts).find((s) => s.start <= t && t < s.end);
    if (hit) return hit;
  }
  throw new Error(`No shift contains ${new Date(t).toISOString()} in ${timeZone}.`);
}

/** The last shift that has ended by `t` (its handover is available). */
export function lastEndedShift(t: number, timeZone: string, starts: number[]): Shift {
  const current = shiftAt(t, timeZone, starts);
  return shiftAt(current.start - 1, timeZone, starts);
}

/** The shift that follows one. */
export function nextShift(s: Shift, timeZone: string, starts: number[]): Shift {
  return shiftAt(s.end, timeZone, starts);
}
