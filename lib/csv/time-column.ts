/**
 * The time column of a CSV export across its rows: seconds (any origin; the unit in the header,
 * `t [min]`, scales them; without a unit a number too large for seconds is milliseconds since 1970,
 * with a caution, and larger still is refused) or ISO 8601 date-times with a zone (time.ts), one
 * kind per file. Whether times may repeat or go back is the reader's to say.
 */
import { CsvError } from "./error";
import type { NumberReader } from "./numbers";
import { EPOCH_MS_FROM, EPOCH_MS_TO, isPlainNumber, parseClockSeconds, parseIsoSeconds, TIME_UNITS } from "./time";

const SEMICOLON_DECIMAL = /^[+-]?\d*,\d+$/;

export class TimeColumn {
  kind: "seconds" | "iso" | null = null;
  /** First row's time as ISO 8601 when the file holds date-times or milliseconds since 1970, else null. */
  startTime: string | null = null;
  /** What was read with an assumption (the unit of large numbers). */
  readonly cautions: string[] = [];
  private scale: number;
  private readonly unitGiven: boolean;
  private clockCautioned = false;

  /**
   * `unit` as the header writes it (null when none); throws CsvError naming the header line and
   * the column for a unit that is not a time unit. `numbers` reads the file's numbers (its decimal mark).
   */
  /**
   * `clockTimes`: date-times without a zone are read as clock times (spacing only) with a caution,
   * for a reader that needs only the spacing (the offline assessment); otherwise they are refused.
   */
  constructor(
    unit: string | null,
    where: { line: number; column: number },
    private readonly numbers: NumberReader,
    private readonly clockTimes = false,
  ) {
    const scale = unit === null ? 1 : TIME_UNITS[unit.toLowerCase()];
    if (scale === undefined) throw new CsvError(`Line ${where.line}: time unit "${unit}" is not one of s, ms, min, h, d.`, where.line, "t", where.column + 1);
    this.scale = scale;
    this.unitGiven = unit !== null;
  }

  /** Seconds of a time cell (since 1970 for date-times and epoch milliseconds), or a sentence saying what is wrong. */
  read(raw: string, where: string): number | string {
    const numeric = isPlainNumber(raw) || (this.numbers.decimalComma && SEMICOLON_DECIMAL.test(raw));
    const tn = numeric ? this.numbers.read(raw, where) : NaN;
    if (typeof tn === "string") return tn;
    let t: number;
    let kind: "seconds" | "iso";
    if (!Number.isNaN(tn)) {
      kind = "seconds";
      if (this.kind === null && !this.unitGiven && Math.abs(tn) >= EPOCH_MS_FROM) {
        if (Math.abs(tn) >= EPOCH_MS_TO) return `${raw} is too large for seconds or milliseconds since 1970; give the unit in the header, e.g. "t [ms]".`;
        this.scale = 0.001;
        this.cautions.push(`The times have no unit and are too large for seconds (${raw}): read as milliseconds since 1970.`);
      }
      t = tn * this.scale;
    } else {
      kind = "iso";
      let s = parseIsoSeconds(raw);
      if (typeof s === "string" && this.clockTimes) {
        const c = parseClockSeconds(raw);
        if (c !== null) {
          if (!this.clockCautioned) this.cautions.push(`The date-times have no zone ("${raw.slice(0, 40)}"): read as clock times, so only their spacing counts; a clock change inside the file shows as a gap of an hour, or as time going back (refused, naming the line).`);
          this.clockCautioned = true;
          s = c;
        }
      }
      if (typeof s === "string") return `"${raw.slice(0, 40)}" ${s}.`;
      t = s;
    }
    if (this.kind === null) {
      this.kind = kind;
      if (kind === "iso" || this.scale === 0.001) this.startTime = new Date(t * 1000).toISOString();
    } else if (kind !== this.kind) {
      return `mixes ${kind === "iso" ? "a date-time" : "seconds"} with the ${this.kind === "iso" ? "date-times" : "seconds"} above.`;
    }
    return t;
  }
}
