/** Query parameters shared by the report routes and pages (zod). */
import { z } from "zod";

const DAY_MS = 86_400_000;
const id = z.coerce.number().int().positive();
const day = z
  .string()
  .regex(/^\d{4}-\d{2}-\d{2}$/, "a date YYYY-MM-DD")
  .transform((s, c) => {
    const t = Date.parse(`${s}T00:00:00Z`);
    if (!Number.isFinite(t)) c.addIssue({ code: "custom", message: "not a calendar date" });
    return t;
  });

/** `from`/`to` are UTC days, `to` inclusive on the wire (the last day shown), exclusive inside. */
export const periodReportQuery = z
  .object({
    from: day.optional(),
    to: day.optional(),
    siteId: id.optional(),
    areaId: id.optional(),
    kind: z.enum(["flow", "level", "temperature", "pressure", "composition", "other"]).optional(),
    format: z.enum(["json", "csv", "pdf"]).default("json"),
  })
  .strict();
export type PeriodReportQuery = z.infer<typeof periodReportQuery>;

/** The period of a query: default the last 7 UTC days, today (so far) included. */
export function periodOf(q: { from?: number; to?: number }, now: number, defaultDays = 7): { from: number; to: number } {
  const tomorrow = Math.floor(now / DAY_MS) * DAY_MS + DAY_MS;
  const to = q.to !== undefined ? q.to + DAY_MS : tomorrow;
  const from = q.from ?? to - defaultDays * DAY_MS;
  return { from, to };
}

/** The time a server-rendered report is read at (server components render once per request). */
export function readTime(): number {
  return Date.now();
}
