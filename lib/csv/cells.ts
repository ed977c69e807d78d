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

/** A separator's name in a message. */
export const sepName = (sep: string): string => (sep === "\t" ? "tab" : sep);
