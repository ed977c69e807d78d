/**
 * Bytes of a CSV export to text: UTF-8 (a byte order mark is dropped) or UTF-16, as spreadsheet
 * programs save "Unicode text" (with a byte order mark, big- or little-endian, or little-endian
 * ASCII without one: a zero in every second byte). Browser-safe (TextDecoder); whole files with
 * decodeText, streams chunk by chunk with TextSniffer.
 */

type Encoding = "utf-8" | "utf-16le" | "utf-16be";

/** The encoding the first bytes show; null while fewer than 4 bytes are known and the stream goes on. */
function sniff(head: Uint8Array, final: boolean): Encoding | null {
  if (head.length >= 2 && head[0] === 0xff && head[1] === 0xfe) return "utf-16le";
  if (head.length >= 2 && head[0] === 0xfe && head[1] === 0xff) return "utf-16be";
  if (head.length >= 4) return head[0] !== 0 && head[1] === 0 && head[2] !== 0 && head[3] === 0 ? "utf-16le" : "utf-8";
  return final ? "utf-8" : null;
}

/** Text of a stream of byte chunks, decoded in the encoding its first bytes show (the byte order mark is dropped). */
export class TextSniffer {
  private decoder: TextDecoder | null = null;
  private head = new Uint8Array(0);

  push(bytes: Uint8Array): string {
    if (this.decoder) return this.decoder.decode(bytes, { stream: true });
    const head = new Uint8Array(this.head.length + bytes.length);
    head.set(this.head);
    head.set(bytes, this.head.length);
    const enc = sniff(head, false);
    if (enc === null) {
      this.head = head;
      return "";
    }
    this.decoder = new TextDecoder(enc);
    this.head = new Uint8Array(0);
    return this.decoder.decode(head, { stream: true });
  }

  end(): string {
    if (this.decoder) return this.decoder.decode();
    this.decoder = new TextDecoder(sniff(this.head, true)!);
    return this.decoder.decode(this.head);
  }
}

/** Text of a whole file's bytes (see TextSniffer). */
export function decodeText(bytes: Uint8Array): string {
  const s = new TextSniffer();
  return s.push(bytes) + s.end();
}

/** The text without a leading byte order mark. */
export const withoutBom = (s: string): string => (s.charCodeAt(0) === 0xfeff ? s.slice(1) : s);
