/**
 * Just enough RFC 5322 parsing for the outbox: unfolded headers (RFC 5322 §2.2.3), encoded-word
 * subjects (RFC 2047, B and Q), and a single text body in 7bit, 8bit, quoted-printable
 * (RFC 2045 §6.7) or base64. Multipart messages show their first text/plain part.
 */
export interface ParsedMessage {
  headers: Record<string, string>;
  text: string;
}

function decodeQp(s: string): string {
  const bytes: number[] = [];
  const src = s.replace(/=\r?\n/g, "");
  for (let i = 0; i < src.length; i++) {
    const c = src[i] as string;
    if (c === "=" && /^[0-9A-Fa-f]{2}$/.test(src.slice(i + 1, i + 3))) {
      bytes.push(parseInt(src.slice(i + 1, i + 3), 16));
      i += 2;
    } else bytes.push(...Buffer.from(c, "utf8"));
  }
  return Buffer.from(bytes).toString("utf8");
}

function decodeWords(s: string): string {
  return s.replace(/=\?([^?]+)\?([BbQq])\?([^?]*)\?=\s*/g, (_m, _cs: string, enc: string, data: string) =>
    enc.toUpperCase() === "B" ? Buffer.from(data, "base64").toString("utf8") : decodeQp(data.replace(/_/g, " ")),
  );
}

function splitHead(raw: string): { headers: Record<string, string>; body: string } {
  const sep = raw.search(/\r?\n\r?\n/);
  const head = sep >= 0 ? raw.slice(0, sep) : raw;
  const body = sep >= 0 ? raw.slice(sep).replace(/^\r?\n\r?\n/, "") : "";
  const headers: Record<string, string> = {};
  for (const line of head.replace(/\r?\n[ \t]+/g, " ").split(/\r?\n/)) {
    const i = line.indexOf(":");
    if (i <= 0) continue;
    const k = line.slice(0, i).trim().toLowerCase();
    if (!(k in headers)) headers[k] = decodeWords(line.slice(i + 1).trim());
  }
  return { headers, body };
}

function decodeBody(body: string, encoding: string | undefined): string {
  const enc = (encoding ?? "7bit").toLowerCase();
  if (enc === "quoted-printable") return decodeQp(body);
  if (enc === "base64") return Buffer.from(body.replace(/\s+/g, ""), "base64").toString("utf8");
  return body;
}

export function parseRawMessage(raw: string): ParsedMessage {
  const { headers, body } = splitHead(raw);
  const ctype = headers["content-type"] ?? "text/plain";
  const boundary = /boundary="?([^";]+)"?/i.exec(ctype)?.[1];
  if (/^multipart\//i.test(ctype) && boundary) {
    for (const part of body.split(`--${boundary}`)) {
      const p = splitHead(part.replace(/^\r?\n/, ""));
      if (/^text\/plain/i.test(p.headers["content-type"] ?? "")) {
        return { headers, text: decodeBody(p.body, p.headers["content-transfer-encoding"]).replace(/\r\n/g, "\n").trimEnd() };
      }
    }
  }
  return { headers, text: decodeBody(body, headers["content-transfer-encoding"]).replace(/\r\n/g, "\n").trimEnd() };
}
