"use client";
/**
 * zod compiles object parsers with `new Function` when it may; under our Content-Security-Policy
 * (no 'unsafe-eval', lib/security-headers.ts) its probe for that would be reported as a
 * violation. In the browser it parses without compiling; the forms are small.
 */
import { z } from "zod";

z.config({ jitless: true });

export function ZodJitless(): null {
  return null;
}
