/**
 * Number cells of a CSV export: plain decimal numbers, a decimal comma only in files separated by
 * semicolons (the European spreadsheet convention) and never mixed with decimal points in one
 * file, status text in place of a value (a cell without a digit: missing). Digit grouping, hex
 * and a number with a letter in it are refused with a hint.
 */
import { isPlainNumber } from "./time";

/** A number with one decimal comma and no point: "12,5", "-0,25", "1,5e3". */
const DECIMAL_COMMA = /^[+-]?\d*,\d+([eE][+-]?\d+)?$/;
const GROUPED = /^[+-]?\d{1,3}([,.' ]\d{3})+([.,]\d+)?$/;
const HAS_DIGIT = /\d/;

/** Outcome of reading one number cell: the number, NaN for status text, or a fault sentence. */
export type CellValue = number | string;

export class NumberReader {
  /** Decimal mark first seen in the file and where. */
  private mark: "." | "," | null = null;
  private markAt = "";
  /** Cells read as missing (status text or empty) outside bad-quality rows. */
  missing = 0;
  firstMissing = "";

  constructor(readonly decimalComma: boolean) {}

  /** The number in `raw`; NaN when the cell holds no digit (empty, NaN, Bad, #N/A, I/O Timeout ...). */
  read(raw: string, where: string): CellValue {
    let text = raw;
    if (isPlainNumber(raw)) {
      if (this.decimalComma && raw.includes(".")) {
        const clash = this.see(".", where);
        if (clash) return clash;
      }
    } else if (this.decimalComma && DECIMAL_COMMA.test(raw)) {
      const clash = this.see(",", where);
      if (clash) return clash;
      text = raw.replace(",", ".");
    } else if (!HAS_DIGIT.test(raw)) {
      return NaN;
    } else {
      const hint = GROUPED.test(raw)
        ? " Digit grouping (thousands separators) is not read; export the numbers without it."
        : DECIMAL_COMMA.test(raw)
          ? " Use a point as the decimal separator (a decimal comma is read only in files separated by semicolons)."
          : "";
      return `"${raw.slice(0, 40)}" is not a number.${hint}`;
    }
    const v = Number(text);
    return Number.isFinite(v) ? v : `"${raw.slice(0, 40)}" is out of range.`;
  }

  noteMissing(where: string): void {
    if (this.missing++ === 0) this.firstMissing = where;
  }

  private see(mark: "." | ",", where: string): string | null {
    if (this.mark === null) {
      this.mark = mark;
      this.markAt = where;
      return null;
    }
    if (this.mark === mark) return null;
    return `a decimal ${mark === "." ? "point" : "comma"} here, a decimal ${mark === "." ? "comma" : "point"} at ${this.markAt}; one of them is a digit grouping mark, so the numbers cannot be read safely. Export with one decimal mark and no digit grouping.`;
  }
}
