/** A fault in a delimited text file, naming its line (1-based, comments and blank lines counted) and, when known, its column. */
export class CsvError extends Error {
  constructor(
    message: string,
    readonly line: number,
    /** The column's name as the header gives it (lower case), null when the fault is not in one cell. */
    readonly column: string | null = null,
    /** The column's number (1-based), null when the fault is not in one cell. */
    readonly columnNo: number | null = null,
    /** Every fault when one line has several (a header with an unknown and a missing column); empty when this is the only one. */
    readonly parts: readonly CsvError[] = [],
  ) {
    super(message);
    this.name = "CsvError";
  }
}
