/**
 * Lines of a text ended by LF, CRLF or a lone CR (old spreadsheet exports): a whole text read in
 * one pass without splitting it into an array (lineReader), or a stream read chunk by chunk with
 * a bound on a line's length (LineSplitter). Both count lines the same way, so a line number in a
 * message is the one an editor shows.
 */

/** Lines of `text` one at a time; `lineNo()` is the number (1-based) of the line `next()` returned last. */
export function lineReader(text: string): { next: () => string | null; lineNo: () => number } {
  let pos = 0;
  let lineNo = 0;
  let lf = -2;
  let cr = -2;
  const next = (): string | null => {
    if (pos >= text.length) return null;
    if (lf !== -1 && lf < pos) lf = text.indexOf("\n", pos);
    if (cr !== -1 && cr < pos) cr = text.indexOf("\r", pos);
    const end = lf < 0 ? (cr < 0 ? text.length : cr) : cr < 0 ? lf : Math.min(lf, cr);
    const line = text.slice(pos, end);
    pos = end + (text.charCodeAt(end) === 13 && text.charCodeAt(end + 1) === 10 ? 2 : 1);
    lineNo++;
    return line;
  };
  return { next, lineNo: () => lineNo };
}

/** Stands for a line longer than the splitter's bound: its text is not kept. */
export const TOO_LONG = null;

/**
 * Complete lines of a text that arrives in pieces. A line longer than `maxChars` comes out as
 * TOO_LONG (its characters are dropped as they arrive, so memory stays bounded) and the lines
 * after it are read as usual.
 */
export class LineSplitter {
  private rest = "";
  private overlong = false;
  /** The last piece ended in CR: a LF at the start of the next one belongs to it. */
  private afterCr = false;

  constructor(readonly maxChars = Infinity) {}

  push(text: string): (string | typeof TOO_LONG)[] {
    const out: (string | typeof TOO_LONG)[] = [];
    let pos = 0;
    if (this.afterCr && text.charCodeAt(0) === 10) pos = 1;
    this.afterCr = false;
    let lf = -2;
    let cr = -2;
    while (pos < text.length) {
      if (lf !== -1 && lf < pos) lf = text.indexOf("\n", pos);
      if (cr !== -1 && cr < pos) cr = text.indexOf("\r", pos);
      const end = lf < 0 ? cr : cr < 0 ? lf : Math.min(lf, cr);
      if (end < 0) break;
      const line = this.rest + text.slice(pos, end);
      out.push(this.overlong || line.length > this.maxChars ? TOO_LONG : line);
      this.rest = "";
      this.overlong = false;
      if (text.charCodeAt(end) !== 13) pos = end + 1;
      else if (end + 1 < text.length) pos = end + (text.charCodeAt(end + 1) === 10 ? 2 : 1);
      else {
        this.afterCr = true;
        pos = end + 1;
      }
    }
    if (pos < text.length && !this.overlong) {
      this.rest += text.slice(pos);
      if (this.rest.length > this.maxChars) {
        this.overlong = true;
        this.rest = "";
      }
    }
    return out;
  }

  /** The last line when the text does not end with a line end. */
  end(): (string | typeof TOO_LONG)[] {
    const last = this.overlong ? [TOO_LONG] : this.rest.length > 0 ? [this.rest] : [];
    this.rest = "";
    this.overlong = false;
    return last;
  }
}
