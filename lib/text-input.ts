/**
 * Text typed by people into configuration (names, reasons, recipients, tags...). Every zod schema
 * of a configuration change builds its string fields from `text()`, so one rule holds for all of
 * them: the text must be well-formed Unicode — a lone UTF-16 surrogate (which JSON can carry as
 * "\ud800") is refused with 422 instead of reaching MariaDB's utf8mb4, which cannot store it — and
 * it is stored in Unicode normalisation form C, so names that look the same compare the same.
 */
import { z } from "zod";

/** A high surrogate not followed by a low one, or a low surrogate not preceded by a high one. */
const LONE_SURROGATE = /[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/;

export const NOT_WELL_FORMED = "must be well-formed Unicode text (it contains a lone UTF-16 surrogate).";

/** True when `s` has no lone surrogate (String.prototype.isWellFormed, ES2024). */
export function isWellFormedText(s: string): boolean {
  return !LONE_SURROGATE.test(s);
}

/** A string field: well-formed Unicode, NFC-normalised. Chain .trim(), .min(), .max() as usual. */
export function text(params?: Parameters<typeof z.string>[0]) {
  return z
    .string(params)
    .refine(isWellFormedText, { message: NOT_WELL_FORMED, abort: true })
    .overwrite((s) => s.normalize("NFC"));
}
