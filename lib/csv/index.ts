/**
 * The one CSV layer of the product (browser-safe, no Node APIs; imports nothing outside lib/csv):
 * bytes to text, lines, records spanning lines, cells, the header and its columns (lax for exports,
 * strict for a hand-kept sheet), time, number, mode and quality cells,
 * and the error that names the line. The readers (offline assessment, step-test uploads, the
 * historian backfill, the loop inventory import) keep only their own columns, limits and what they
 * do with the rows.
 */
export { splitCells, splitQuotedCells, splitStrictCells } from "./cells";
export { decodeText, TextSniffer, withoutBom } from "./encoding";
export { CsvError } from "./error";
export { lineReader, LineSplitter, TOO_LONG } from "./lines";
export { recordReader } from "./records";
export { NumberReader, type CellValue } from "./numbers";
export { modeFault, parseMode, parseQuality, type CsvMode, type CsvQuality } from "./status";
export { CsvTable, headerCell, SAMPLE_ALIASES, type TableHeader, type TableSpec } from "./table";
export { TimeColumn } from "./time-column";
export { EPOCH_MS_FROM, EPOCH_MS_TO, isPlainNumber, parseIsoSeconds, TIME_UNITS } from "./time";
