/**
 * Records of a whole text: a line, or several when a quoted cell holds line ends (RFC 4180: a
 * description typed over two lines in a spreadsheet is saved that way). The line ends inside a
 * quoted cell are kept as written; a record ends at LF, CRLF or a lone CR outside quotes, as lines
 * end in lines.ts. As in RFC 4180 a quote opens a quoted cell only at the cell's start (after a
 * comma, semicolon or tab, or the record's start, blanks allowed), and a doubled quote inside one
 * is a quote; a stray quote elsewhere (`5" pipe`) does not open one, so it cannot join the lines
 * after it (splitStrictCells in cells.ts refuses it, naming the line).
 */
import { CsvError } from "./error";

const SEPARATORS = new Set([44, 59, 9]); // , ; tab

/**
 * Records of `text` one at a time; `lineNo()` is the line (1-based, as an editor shows it) on
 * which the record `next()` returned last starts. Throws CsvError naming that line when a quoted
 * cell is still open at the end of the text.
 */
export function recordReader(text: string): { next: () => string | null; lineNo: () => number } {
  let pos = 0;
  let linesDone = 0;
  let start = 0;
  const next = (): string | null => {
    if (pos >= text.length) return null;
    start = linesDone + 1;
    let state: "start" | "cell" | "quoted" = "start";
    for (let i = pos; i < text.length; i++) {
      const c = text.charCodeAt(i);
      if (c === 10 || c === 13) {
        linesDone++;
        const crlf = c === 13 && text.charCodeAt(i + 1) === 10;
        if (state !== "quoted") {
          const record = text.slice(pos, i);
          pos = i + (crlf ? 2 : 1);
          return record;
        }
        if (crlf) i++;
      } else if (state === "quoted") {
        if (c === 34 && text.charCodeAt(i + 1) === 34) i++;
        else if (c === 34) state = "cell";
      } else if (SEPARATORS.has(c)) state = "start";
      else if (state === "start" && c === 34) state = "quoted";
      else if (c > 32) state = "cell";
    }
    if (state === "quoted") throw new CsvError(`Line ${start}: a quoted cell starts on this line and is not closed by the end of the file (a lone " in a cell?).`, start);
    linesDone++;
    const record = text.slice(pos);
    pos = text.length;
    return record;
  };
  return { next, lineNo: () => start };
}
