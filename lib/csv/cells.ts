import { CsvError } from "./error";

/**
 * One line of a delimited text file split into cells. Quoted cells ("a,b") may hold the
 * separator; a doubled quote inside is a literal quote (RFC 4180). Every cell is trimmed.
 */
export function splitQuotedCells(line: string, sep: string): string[] {
  const out: string[] = [];
  let cur = "";
  let quoted = false;
  for (let i = 0; i < line.length; i++) {
    const ch = line[i]!;
    if (quoted) {
      if (ch === '"' && line[i + 1] === '"') {
        cur += '"';
        i++;
      } else if (ch === '"') quoted = false;
      else cur += ch;
    } else if (ch === '"') quoted = true;
    else if (ch === sep) {
      out.push(cur.trim());
      cur = "";
    } else cur += ch;
  }
  out.push(cur.trim());
  return out;
}

function trimIfNeeded(c: string): string {
  return c.length > 0 && (c.charCodeAt(0) <= 32 || c.charCodeAt(c.length - 1) <= 32) ? c.trim() : c;
}

/** The cells of a line, trimmed; lines without a quote take a fast path. */
export function splitCells(line: string, sep: string): string[] {
  if (!line.includes('"')) {
    const cells = line.split(sep);
    for (let i = 0; i < cells.length; i++) cells[i] = trimIfNeeded(cells[i]!);
    return cells;
  }
  return splitQuotedCells(line, sep);
}

const isBlank = (ch: string, sep: string) => ch !== sep && ch.charCodeAt(0) <= 32;

/**
 * The cells of a record (records.ts: it may span lines) by RFC 4180 without leniency: a quote
 * opens a quoted cell only at its start (blanks before it allowed), and only blanks may follow the
 * closing quote. Anything else throws CsvError naming `lineNo` and the cell's number (a stray
 * quote would otherwise swallow characters or join cells). Every cell is trimmed.
 */
export function splitStrictCells(record: string, sep: string, lineNo: number): string[] {
  const out: string[] = [];
  let cur = "";
  let state: "start" | "plain" | "quoted" | "closed" = "start";
  const fault = (what: string) => {
    throw new CsvError(`Line ${lineNo}: cell ${out.length + 1} ${what}; put the whole cell in quotes and double a quote inside it ("5"" pipe").`, lineNo, null, out.length + 1);
  };
  for (let i = 0; i < record.length; i++) {
    const ch = record[i]!;
    if (state === "quoted") {
      if (ch !== '"') cur += ch;
      else if (record[i + 1] === '"') {
        cur += '"';
        i++;
      } else state = "closed";
    } else if (ch === sep) {
      out.push(cur.trim());
      cur = "";
      state = "start";
    } else if (ch === '"') {
      if (state === "start") state = "quoted";
      else fault(state === "plain" ? "has a quote inside text that is not quoted" : "has a second quote after its closing quote");
    } else if (state === "closed") {
      if (!isBlank(ch, sep)) fault("has text after its closing quote");
    } else {
      if (!isBlank(ch, sep)) state = "plain";
      cur += ch;
    }
  }
  if (state === "quoted") fault("opens a quote that is not closed");
  out.push(cur.trim());
  return out;
}

/** A separator's name in a message. */
export const sepName = (sep: string): string => (sep === "\t" ? "tab" : sep);
