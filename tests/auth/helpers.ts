/** HTTP helpers for signing in through the real next-auth route handlers. */
import http from "node:http";
import { FIXTURE_PASSWORD } from "./fixture";

/** A minimal cookie jar: name -> value, from Set-Cookie headers. */
export class CookieJar {
  private readonly map = new Map<string, string>();
  absorb(res: Response): void {
    for (const line of res.headers.getSetCookie()) {
      const [pair] = line.split(";");
      const eq = pair?.indexOf("=") ?? -1;
      if (!pair || eq < 0) continue;
      const name = pair.slice(0, eq).trim();
      const value = pair.slice(eq + 1).trim();
      if (/max-age=0/i.test(line) || value === "") this.map.delete(name);
      else this.map.set(name, value);
    }
  }
  get(name: string): string | undefined {
    return this.map.get(name);
  }
  header(): string {
    return [...this.map].map(([k, v]) => `${k}=${v}`).join("; ");
  }
}

export const SESSION_COOKIE = "next-auth.session-token";

export interface SignInResult {
  jar: CookieJar;
  /** The session cookie value, or null when sign-in failed. */
  session: string | null;
  /** The error next-auth put in the redirect URL, decoded, or null. */
  error: string | null;
  status: number;
}

/** POST the credentials callback with the CSRF token, as the sign-in form does. */
export async function signIn(baseUrl: string, email: string, password: string): Promise<SignInResult> {
  const jar = new CookieJar();
  const csrfRes = await fetch(`${baseUrl}/api/auth/csrf`);
  jar.absorb(csrfRes);
  const { csrfToken } = (await csrfRes.json()) as { csrfToken: string };
  const res = await fetch(`${baseUrl}/api/auth/callback/credentials`, {
    method: "POST",
    redirect: "manual",
    headers: { "content-type": "application/x-www-form-urlencoded", cookie: jar.header() },
    body: new URLSearchParams({ csrfToken, email, password, callbackUrl: `${baseUrl}/`, json: "true" }),
  });
  jar.absorb(res);
  let error: string | null = null;
  const body = (await res.json().catch(() => null)) as { url?: string } | null;
  const target = body?.url ?? res.headers.get("location");
  if (target) error = new URL(target, baseUrl).searchParams.get("error");
  return { jar, session: jar.get(SESSION_COOKIE) ?? null, error, status: res.status };
}

/**
 * fetch with the jar's cookies. A write carries the console's Origin (baseUrl), as a browser
 * sends it on every same-origin POST/PUT/PATCH/DELETE, unless the caller sets its own.
 */
export function authedFetch(baseUrl: string, jar: CookieJar | null, path: string, init: RequestInit = {}): Promise<Response> {
  const headers = new Headers(init.headers);
  if (jar) headers.set("cookie", jar.header());
  const method = (init.method ?? "GET").toUpperCase();
  if (method !== "GET" && method !== "HEAD" && !headers.has("origin")) headers.set("origin", new URL(baseUrl).origin);
  return fetch(`${baseUrl}${path}`, { ...init, headers, redirect: "manual" });
}

interface RawResponse {
  status: number;
  setCookie: string[];
  body: string;
}

/** One HTTP request from a chosen local address (127.0.0.x are all loopback on Linux). */
function requestFrom(url: string, localAddress: string, init: { method?: string; headers?: Record<string, string>; body?: string } = {}): Promise<RawResponse> {
  return new Promise((resolve, reject) => {
    const req = http.request(url, { method: init.method ?? "GET", headers: init.headers, localAddress }, (res) => {
      let body = "";
      res.setEncoding("utf8");
      res.on("data", (c: string) => (body += c));
      res.on("end", () => {
        const sc = res.headers["set-cookie"] ?? [];
        resolve({ status: res.statusCode ?? 0, setCookie: Array.isArray(sc) ? sc : [sc], body });
      });
    });
    req.on("error", reject);
    if (init.body) req.write(init.body);
    req.end();
  });
}

/** The cookies of a session for `email` with the fixture's password; throws when sign-in fails. */
export async function sessionOf(baseUrl: string, email: string): Promise<CookieJar> {
  const r = await signIn(baseUrl, email, FIXTURE_PASSWORD);
  if (!r.session) throw new Error(`sign-in failed: ${r.error}`);
  return r.jar;
}

/** Like signIn, but from a given loopback address and with extra request headers. */
export async function signInFrom(
  baseUrl: string,
  localAddress: string,
  email: string,
  password: string,
  extraHeaders: Record<string, string> = {},
): Promise<{ session: boolean; error: string | null }> {
  const cookies = new Map<string, string>();
  const absorb = (lines: string[]) => {
    for (const line of lines) {
      const pair = line.split(";")[0] ?? "";
      const eq = pair.indexOf("=");
      if (eq > 0) cookies.set(pair.slice(0, eq).trim(), pair.slice(eq + 1).trim());
    }
  };
  const header = () => [...cookies].map(([k, v]) => `${k}=${v}`).join("; ");
  const csrf = await requestFrom(`${baseUrl}/api/auth/csrf`, localAddress, { headers: extraHeaders });
  absorb(csrf.setCookie);
  const { csrfToken } = JSON.parse(csrf.body) as { csrfToken: string };
  const res = await requestFrom(`${baseUrl}/api/auth/callback/credentials`, localAddress, {
    method: "POST",
    headers: { ...extraHeaders, "content-type": "application/x-www-form-urlencoded", cookie: header() },
    body: new URLSearchParams({ csrfToken, email, password, callbackUrl: `${baseUrl}/`, json: "true" }).toString(),
  });
  absorb(res.setCookie);
  const url = (JSON.parse(res.body || "{}") as { url?: string }).url;
  return { session: cookies.has(SESSION_COOKIE), error: url ? new URL(url, baseUrl).searchParams.get("error") : null };
}
