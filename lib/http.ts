import { NextResponse } from "next/server";
import { z } from "zod";
import { DATABASE_UNAVAILABLE, isDatabaseUnavailable } from "./data/db/unavailable";
import { isHttpError, ValidationError } from "@/lib/domain/errors";
import { guardRequest, JSON_BODY, PayloadTooLargeError, type BodyRule } from "./request-guard";

/** Map a thrown error to a JSON response: HttpError keeps its status, zod errors are 422. */
export function errorResponse(err: unknown): NextResponse {
  // Duck-typed as well: a service outside the route bundle throws with its own copy of zod.
  if (err instanceof z.ZodError || (err instanceof Error && err.name === "ZodError" && Array.isArray((err as z.ZodError).issues))) {
    const zerr = err as z.ZodError;
    return NextResponse.json(
      { error: "Invalid input: " + zerr.issues.map((i) => `${i.path.join(".") || "body"}: ${i.message}`).join("; "), issues: zerr.issues },
      { status: 422 },
    );
  }
  if (isHttpError(err)) {
    const headers: Record<string, string> = {};
    const retry = (err as { retryAfterSeconds?: unknown }).retryAfterSeconds;
    if (typeof retry === "number") headers["Retry-After"] = String(retry);
    return NextResponse.json({ error: err.message, details: err.details }, { status: err.status, headers });
  }
  if (isDatabaseUnavailable(err)) {
    // A connection failure says where the database is: log it, never answer with it.
    console.warn("[api] database unavailable:", err instanceof Error ? err.message : String(err));
    return NextResponse.json({ error: DATABASE_UNAVAILABLE }, { status: 503, headers: { "Retry-After": "10" } });
  }
  console.error("[api] unexpected error", err);
  return NextResponse.json({ error: "Internal error." }, { status: 500 });
}

/**
 * Wrap a route handler so every thrown error becomes the right status code. A state-changing
 * request first passes lib/request-guard.ts (Origin 403, content type 415, size 413); `body` says
 * what the route takes (default: JSON up to 64 KiB).
 */
export function handle<A extends unknown[]>(fn: (...args: A) => Promise<Response>, body: BodyRule = JSON_BODY) {
  return async (...args: A): Promise<Response> => {
    let overflowed = () => false;
    try {
      if (args[0] instanceof Request) {
        const guarded = guardRequest(args[0], body);
        overflowed = guarded.overflowed;
        args[0] = guarded.req as A[0];
      }
      return await fn(...args);
    } catch (err) {
      return errorResponse(overflowed() ? new PayloadTooLargeError(body.maxBytes) : err);
    }
  };
}

/** Parse a JSON body with a zod schema; bad JSON or a bad shape is a 422 with a message. */
export async function parseBody<T extends z.ZodType>(req: Request, schema: T): Promise<z.infer<T>> {
  let raw: unknown;
  try {
    raw = await req.json();
  } catch {
    throw new ValidationError("The request body must be JSON.");
  }
  return schema.parse(raw);
}

/** Parse URL search parameters with a zod schema (422 on failure). */
export function parseQuery<T extends z.ZodType>(req: Request, schema: T): z.infer<T> {
  const url = new URL(req.url);
  return schema.parse(Object.fromEntries(url.searchParams.entries()));
}

const idSchema = z.coerce.number().int().positive();

/** Parse a numeric id from a route segment (422 on anything else). */
export function parseId(raw: string | undefined, what = "id"): number {
  const r = idSchema.safeParse(raw);
  if (!r.success) throw new ValidationError(`The ${what} must be a positive whole number.`);
  return r.data;
}

/** ISO 8601 date-time (with Z or an offset) to epoch ms. */
export const isoTime = z.iso.datetime({ offset: true }).transform((s) => Date.parse(s));

/** Like parseBody, but an empty body counts as `{}` (actions whose fields are all optional). */
export async function parseOptionalBody<T extends z.ZodType>(req: Request, schema: T): Promise<z.infer<T>> {
  const text = await req.text();
  let raw: unknown = {};
  if (text.trim()) {
    try {
      raw = JSON.parse(text) as unknown;
    } catch {
      throw new ValidationError("The request body must be JSON.");
    }
  }
  return schema.parse(raw);
}

/**
 * The file of a multipart upload (field `file`) as bytes, with the form's other text fields:
 * 422 when the body is not multipart or has no file; `tooLarge` answers a file over `maxBytes`.
 */
export async function uploadedFile(req: Request, maxBytes: number, tooLarge: (bytes: number) => Error): Promise<{ name: string; bytes: Uint8Array; field: (k: string) => string | undefined }> {
  if (!(req.headers.get("content-type") ?? "").toLowerCase().startsWith("multipart/form-data")) {
    throw new ValidationError("Send the file as multipart/form-data with the field \"file\".");
  }
  let form: FormData;
  try {
    form = await req.formData();
  } catch {
    throw new ValidationError("The upload could not be read as multipart/form-data.");
  }
  const file = form.get("file");
  if (!file || typeof file === "string") throw new ValidationError("The field \"file\" must hold the CSV file.");
  if (file.size > maxBytes) throw tooLarge(file.size);
  const field = (k: string) => {
    const v = form.get(k);
    return typeof v === "string" && v.trim() !== "" ? v.trim() : undefined;
  };
  return { name: file.name, bytes: new Uint8Array(await file.arrayBuffer()), field };
}

/** A stored CSV sent back as a download, byte for byte. */
export function csvAttachment(filename: string, bytes: Buffer | Uint8Array): Response {
  return new Response(new Uint8Array(bytes), {
    status: 200,
    headers: {
      "content-type": "text/csv; charset=utf-8",
      "content-length": String(bytes.byteLength),
      "content-disposition": `attachment; filename="${filename.replace(/"/g, "")}"`,
      "cache-control": "private, no-store",
    },
  });
}
