/**
 * Response headers every answer of the console carries, set in one place (server/index.ts, the
 * custom server, before Next sees the request). The Content-Security-Policy admits scripts of our
 * own origin and inline scripts only with this request's nonce: Next reads the nonce from the
 * request's `content-security-policy` header and puts it on the inline scripts it renders (every
 * page is rendered per request: the root layout reads a cookie). Styles allow inline attributes,
 * which React renders for `style={...}`; that cannot run code.
 */
import { randomBytes } from "node:crypto";

export function makeNonce(): string {
  return randomBytes(16).toString("base64");
}

/** The policy for one response; `dev` adds what Next's development mode needs (eval for fast refresh). */
export function contentSecurityPolicy(nonce: string, dev = false): string {
  return [
    "default-src 'self'",
    `script-src 'self' 'nonce-${nonce}'${dev ? " 'unsafe-eval'" : ""}`,
    "style-src 'self' 'unsafe-inline'",
    "img-src 'self' data: blob:",
    "font-src 'self'",
    "connect-src 'self'",
    "worker-src 'self' blob:",
    "object-src 'none'",
    "base-uri 'self'",
    "form-action 'self'",
    "frame-ancestors 'none'",
  ].join("; ");
}

/** Headers besides the CSP (nosniff, no framing for old browsers, no referrer off the console). */
export const STATIC_SECURITY_HEADERS: Readonly<Record<string, string>> = {
  "X-Content-Type-Options": "nosniff",
  "X-Frame-Options": "DENY",
  // Invitation links carry a one-time token in the path: never send it to another origin.
  "Referrer-Policy": "same-origin",
  "Permissions-Policy": "camera=(), microphone=(), geolocation=(), payment=()",
};
