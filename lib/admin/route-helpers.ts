/** Small helpers shared by the admin route handlers. */
import { z } from "zod";
import { text } from "@/lib/text-input";
import { ValidationError } from "@/lib/domain/errors";

/** A positive integer id from a dynamic route segment (422 otherwise). */
export function idParam(raw: string | undefined, what: string): number {
  const n = Number(raw);
  if (!Number.isInteger(n) || n <= 0) throw new ValidationError(`${what} must be a positive integer.`);
  return n;
}

export const reasonSchema = z.object({ reason: text().trim().min(3, "Give a reason (at least 3 characters).").max(500) }).strict();
