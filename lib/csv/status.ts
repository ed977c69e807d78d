/**
 * Mode and quality cells of a historian export. Mode words: auto / manual / cascade, also
 * aut, automatic, man, cas, casc, any letter case; numeric mode codes are refused (their meaning
 * differs between control systems). Quality: good / bad / uncertain or an OPC quality code
 * (>= 192 good, 64-191 uncertain, below 64 bad: common practice).
 */
import { isPlainNumber } from "./time";

export type CsvMode = "auto" | "manual" | "cascade";
export type CsvQuality = "good" | "bad" | "uncertain";

/** Mode cells read as unknown (not a fault): empty or a status word. */
const MODE_MISSING = new Set(["", "nan", "n/a", "#n/a", "na", "null", "bad", "-", "?"]);

/** auto / manual / cascade, undefined for an unknown mode (empty or a status word), null when unreadable. */
export function parseMode(raw: string): CsvMode | undefined | null {
  const m = raw.toLowerCase();
  if (m === "auto" || m === "aut" || m === "automatic") return "auto";
  if (m === "manual" || m === "man") return "manual";
  if (m === "cascade" || m === "cas" || m === "casc") return "cascade";
  return MODE_MISSING.has(m) ? undefined : null;
}

export function modeFault(raw: string): string {
  const numeric = isPlainNumber(raw) ? " Numeric mode codes differ between control systems; write the words." : "";
  return `"${raw.slice(0, 20)}" is not auto, manual or cascade.${numeric}`;
}

/** good / bad / uncertain (words or OPC quality codes), undefined when empty, null when unreadable. */
export function parseQuality(raw: string): CsvQuality | undefined | null {
  const q = raw.toLowerCase();
  if (q === "good" || q === "bad" || q === "uncertain") return q;
  if (q === "") return undefined;
  if (isPlainNumber(q)) {
    const code = Number(q);
    return code >= 192 ? "good" : code >= 64 ? "uncertain" : "bad";
  }
  return null;
}
