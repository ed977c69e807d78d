/**
 * What every state-changing request must pass before a route handler sees it (used by `handle()`
 * in lib/http.ts and by the server actions): the caller's Origin, its content type and its size.
 *
 * - Origin: a browser sends `Origin` on every POST/PUT/PATCH/DELETE, same-origin included. It must
 *   equal the console's configured public origin exactly (scheme, host, port; `publicOrigin()` in
 *   lib/config.ts). The Host header is never used: DNS rebinding controls it. A page on another
 *   port of the same host is same-site but not same-origin, so SameSite cookies do not stop it;
 *   this check does. `Sec-Fetch-Site`, when the browser sends it, must say `same-origin`.
 * - Content type: a body of a type the route does not expect is 415, so a no-cors `text/plain`
 *   form or fetch cannot smuggle JSON in.
 * - Size: `Content-Length` above the route's limit is 413 before anything is read; a body without
 *   a length is counted while it streams and cut off at the limit (413).
 */
import { publicOrigin } from "@/lib/config";
import { HttpError } from "@/lib/domain/errors";
import { INVENTORY_IMPORT_BODY } from "@/lib/admin/inventory-limits";
import { MAX_CSV_BYTES } from "@/lib/step-tests/csv";
import { MAX_EXPORT_BYTES } from "@/lib/export-assessments/limits";

/** Body limits per kind of route (bytes). JSON bodies of the API are small forms. */
export const BODY_LIMITS = {
  json: 64 * 1024,
  /** next-auth's sign-in form and server actions (Next's own limit for actions is 1 MB). */
  form: 1024 * 1024,
} as const;

export type BodyKind = "json" | "multipart" | "csv";

export interface BodyRule {
  /** Accepted media type of a non-empty body (415 otherwise). */
  kind: BodyKind;
  maxBytes: number;
}

export const JSON_BODY: BodyRule = { kind: "json", maxBytes: BODY_LIMITS.json };
/** The step-test CSV upload: the file plus room for the multipart envelope. */
export const STEP_TEST_UPLOAD_BODY: BodyRule = { kind: "multipart", maxBytes: MAX_CSV_BYTES + 64 * 1024 };
/** A historian export assessed in the console: the file plus room for the multipart envelope. */
export const EXPORT_UPLOAD_BODY: BodyRule = { kind: "multipart", maxBytes: MAX_EXPORT_BYTES + 64 * 1024 };
/** A historian backfill: a CSV streamed as the body (text/csv), read as it arrives, never held whole. */
export const BACKFILL_UPLOAD_BODY: BodyRule = { kind: "csv", maxBytes: 2 * 1024 * 1024 * 1024 };

/**
 * The largest body the custom server lets through to Next for a path, judged by Content-Length
 * before anything is read (server/index.ts). Route handlers apply their own rule again while the
 * body streams; this table only has to be at least as large as each route's rule.
 */
export function bodyLimitForPath(pathname: string): number {
  if (/^\/api\/loops\/[^/]+\/step-tests\/?$/.test(pathname)) return STEP_TEST_UPLOAD_BODY.maxBytes;
  if (/^\/api\/loops\/[^/]+\/exports\/?$/.test(pathname)) return EXPORT_UPLOAD_BODY.maxBytes;
  if (/^\/api\/admin\/loop-inventory\/?$/.test(pathname)) return INVENTORY_IMPORT_BODY.maxBytes;
  if (/^\/api\/loops\/[^/]+\/backfills\/?$/.test(pathname)) return BACKFILL_UPLOAD_BODY.maxBytes;
  if (pathname.startsWith("/api/")) return BODY_LIMITS.json;
  return BODY_LIMITS.form;
}

const SAFE_METHODS = new Set(["GET", "HEAD", "OPTIONS"]);

/** 403 for a cross-origin write. */
export class ForeignOriginError extends HttpError {
  constructor() {
    super(403, "This request did not come from the Rimguard console (Origin check).");
  }
}
/** 415 for a body the route does not take. */
export class UnsupportedMediaTypeError extends HttpError {
  constructor(expected: string) {
    super(415, `Send the body as ${expected}.`);
  }
}
/** 413 for a body above the route's limit. */
export class PayloadTooLargeError extends HttpError {
  constructor(limit: number) {
    super(413, `The request body is larger than this endpoint accepts (${Math.round(limit / 1024)} KiB).`);
  }
}

export const isStateChanging = (method: string) => !SAFE_METHODS.has(method.toUpperCase());

/** Throws ForeignOriginError unless Origin is the console's own and Sec-Fetch-Site agrees. */
export function assertSameOrigin(headers: Pick<Headers, "get">, expected: string = publicOrigin()): void {
  const origin = headers.get("origin");
  if (!origin || origin !== expected) throw new ForeignOriginError();
  const site = headers.get("sec-fetch-site");
  if (site !== null && site !== "same-origin") throw new ForeignOriginError();
}

function mediaType(headers: Headers): string {
  return (headers.get("content-type") ?? "").split(";")[0]!.trim().toLowerCase();
}

/** Whether the request carries a body at all (a declared non-zero length or a chunked body). */
export function hasBody(headers: Headers): boolean {
  const len = headers.get("content-length");
  if (len !== null) return Number(len) !== 0;
  return headers.has("transfer-encoding");
}

/** 415 / 413 from the headers alone, before the body is read. */
export function assertBodyHeaders(headers: Headers, rule: BodyRule): void {
  if (!hasBody(headers)) return;
  const type = mediaType(headers);
  if (rule.kind === "json" && type !== "application/json") throw new UnsupportedMediaTypeError("application/json");
  if (rule.kind === "multipart" && type !== "multipart/form-data") throw new UnsupportedMediaTypeError("multipart/form-data");
  if (rule.kind === "csv" && type !== "text/csv") throw new UnsupportedMediaTypeError("text/csv");
  const declared = Number(headers.get("content-length") ?? NaN);
  if (Number.isFinite(declared) && declared > rule.maxBytes) throw new PayloadTooLargeError(rule.maxBytes);
}

/**
 * The request with its body cut off at `maxBytes` while it streams: reading past the limit fails,
 * and `overflowed()` tells the wrapper to answer 413 whatever the handler made of the failure.
 */
export function capBody(req: Request, maxBytes: number): { req: Request; overflowed: () => boolean } {
  if (!req.body) return { req, overflowed: () => false };
  let seen = 0;
  let over = false;
  const source = req.body;
  const capped = source.pipeThrough(
    new TransformStream<Uint8Array, Uint8Array>({
      transform(chunk, controller) {
        seen += chunk.byteLength;
        if (seen > maxBytes) {
          over = true;
          controller.error(new PayloadTooLargeError(maxBytes));
          void source.cancel().catch(() => undefined);
          return;
        }
        controller.enqueue(chunk);
      },
    }),
  );
  const init: RequestInit & { duplex: "half" } = { method: req.method, headers: req.headers, body: capped, signal: req.signal, duplex: "half" };
  return { req: new Request(req.url, init), overflowed: () => over };
}

/**
 * Every check for one request; returns the request to hand to the route (body capped). Safe
 * methods pass untouched.
 */
export function guardRequest(req: Request, rule: BodyRule = JSON_BODY): { req: Request; overflowed: () => boolean } {
  if (!isStateChanging(req.method)) return { req, overflowed: () => false };
  assertSameOrigin(req.headers);
  assertBodyHeaders(req.headers, rule);
  return capBody(req, rule.maxBytes);
}
