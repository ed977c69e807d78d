/**
 * A request for a route handler under test. Writes carry the console's Origin, as the browser
 * sends it on every same-origin write (lib/request-guard.ts); a string body is sent as it is (for
 * malformed JSON), anything else as JSON.
 */
import { publicOrigin } from "@/lib/config";

export function jsonRequest(method: string, path: string, body?: unknown): Request {
  return new Request(`http://127.0.0.1${path}`, {
    method,
    headers: { "content-type": "application/json", origin: publicOrigin() },
    body: body === undefined ? undefined : typeof body === "string" ? body : JSON.stringify(body),
  });
}
