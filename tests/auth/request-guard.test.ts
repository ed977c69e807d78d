/**
 * Forged and oversized writes (issue 9, items 2 and 10): with a valid admin session, every
 * state-changing route of tests/auth/route-matrix.ts (and sign-out everywhere) refuses a foreign
 * Origin (a page on another port of the same host is same-site, not same-origin), a missing Origin
 * and a `Sec-Fetch-Site` other than same-origin with 403, and a JSON body sent as `text/plain`
 * (what a no-cors fetch or a plain HTML form can send) with 415. Bodies above a route's limit are
 * 413 before they are read. Origin semantics: RFC 6454 (scheme, host, port); Fetch Metadata's
 * Sec-Fetch-Site values: W3C Fetch Metadata Request Headers.
 */
import http from "node:http";
import { beforeAll, describe, expect, it } from "vitest";
import { configSchema, publicOrigin } from "@/lib/config";
import { BODY_LIMITS } from "@/lib/request-guard";
import { setUpServerSuite } from "../helpers/server-suite";
import { authedFetch, sessionOf, type CookieJar } from "./helpers";
import { ROUTES, type RouteCase } from "./route-matrix";

const suite = setUpServerSuite({ seed: false });
let admin: CookieJar;

beforeAll(async () => {
  admin = await sessionOf(suite.srv.url, suite.fx.a.users.admin.email);
});

const fill = (p: string) => p.replaceAll(":loopId", String(suite.fx.a.loopId)).replaceAll(":siteId", String(suite.fx.a.siteId)).replaceAll(":none", "999999");

const WRITES: Pick<RouteCase, "method" | "path" | "body">[] = [
  ...ROUTES.filter((c) => c.method !== "GET"),
  { method: "POST", path: "/api/session/signout-everywhere" },
];

function send(c: Pick<RouteCase, "method" | "path" | "body">, headers: Record<string, string>, contentType = "application/json") {
  return authedFetch(suite.srv.url, admin, fill(c.path), {
    method: c.method,
    headers: { "content-type": contentType, ...headers },
    body: JSON.stringify(c.body ?? {}),
  });
}

describe("state-changing routes refuse forged requests", () => {
  it("has writes to check", () => {
    expect(WRITES.length).toBeGreaterThanOrEqual(20);
  });

  for (const c of WRITES) {
    it(`${c.method} ${c.path}: 403 for a foreign, missing or cross-site Origin; 415 for text/plain`, async () => {
      const otherPort = new URL(suite.srv.url);
      otherPort.port = String(suite.srv.port === 65535 ? 1 : suite.srv.port + 1);
      const foreign = await send(c, { origin: otherPort.origin });
      const foreignBody = `${foreign.status} ${await foreign.text()}`;
      expect(foreign.status, foreignBody).toBe(403);
      expect(foreignBody).toMatch(/Origin/);

      const missing = await send(c, { origin: "" });
      expect(missing.status).toBe(403);
      const crossSite = await send(c, { origin: suite.srv.url, "sec-fetch-site": "same-site" });
      expect(crossSite.status).toBe(403);

      const plain = await send(c, { origin: suite.srv.url }, "text/plain;charset=UTF-8");
      expect(plain.status, await plain.text()).toBe(415);
    });
  }

  it("a forged write changes nothing: no site is created, and the session survives a forged sign-out-everywhere", async () => {
    const before = ((await (await authedFetch(suite.srv.url, admin, "/api/admin/sites")).json()) as { sites: unknown[] }).sites.length;
    const body = JSON.stringify({ name: "Forged Site", timeZone: "UTC", reason: "forged" });
    const forged = await authedFetch(suite.srv.url, admin, "/api/admin/sites", { method: "POST", headers: { "content-type": "application/json", origin: "http://127.0.0.1:1" }, body });
    expect(forged.status).toBe(403);
    const plain = await authedFetch(suite.srv.url, admin, "/api/admin/sites", { method: "POST", headers: { "content-type": "text/plain" }, body });
    expect(plain.status).toBe(415);
    const after = ((await (await authedFetch(suite.srv.url, admin, "/api/admin/sites")).json()) as { sites: unknown[] }).sites.length;
    expect(after).toBe(before);
    expect((await authedFetch(suite.srv.url, admin, "/api/session")).status).toBe(200);
  });

  it("a same-origin JSON write from the console still works", async () => {
    const res = await authedFetch(suite.srv.url, admin, "/api/admin/sites", {
      method: "POST",
      headers: { "content-type": "application/json; charset=utf-8", "sec-fetch-site": "same-origin" },
      body: JSON.stringify({ name: "Guard Check Site", timeZone: "UTC" }),
    });
    expect(res.status, await res.clone().text()).toBe(201);
  });
});

describe("the configured public origin", () => {
  it("is an origin only, normalised as browsers send it; a path is refused", () => {
    expect(configSchema.parse({ PUBLIC_ORIGIN: "HTTPS://Console.Example.COM:443/" }).PUBLIC_ORIGIN).toBe("https://console.example.com");
    expect(configSchema.safeParse({ PUBLIC_ORIGIN: "http://console.example.com/rimguard" }).success).toBe(false);
    expect(configSchema.safeParse({ PUBLIC_ORIGIN: "ftp://console.example.com" }).success).toBe(false);
    expect(publicOrigin(configSchema.parse({ HOST: "127.0.0.1", PORT: "4100" }))).toBe("http://127.0.0.1:4100");
    expect(publicOrigin(configSchema.parse({ HOST: "0.0.0.0", PORT: "4100", NEXTAUTH_URL: "http://ops.example:4100/x" }))).toBe("http://ops.example:4100");
  });
});

/** Raw HTTP so the test controls Content-Length and how much of the body is sent. */
function rawPost(
  path: string,
  headers: Record<string, string>,
  body: { declared?: number; total: number },
): Promise<{ status: number; bytesSent: number; text: string }> {
  return new Promise((resolve, reject) => {
    let sent = 0;
    let done = false;
    const h: Record<string, string> = { ...headers };
    if (body.declared !== undefined) h["content-length"] = String(body.declared);
    const req = http.request(`${suite.srv.url}${path}`, { method: "POST", headers: h, agent: false });
    req.on("response", (res) => {
      done = true;
      let text = "";
      res.setEncoding("utf8");
      res.on("data", (d: string) => (text += d));
      res.on("end", () => resolve({ status: res.statusCode ?? 0, bytesSent: sent, text }));
      res.on("error", () => resolve({ status: res.statusCode ?? 0, bytesSent: sent, text }));
    });
    req.on("error", (err) => (done ? undefined : reject(err)));
    const chunk = Buffer.alloc(64 * 1024, 0x20);
    const pump = () => {
      while (!done && sent < body.total) {
        const n = Math.min(chunk.length, body.total - sent);
        sent += n;
        if (!req.write(chunk.subarray(0, n))) return void req.once("drain", pump);
      }
      if (!done) req.end();
    };
    pump();
  });
}

describe("request bodies are capped before they are read", () => {
  it("a 50 MB unauthenticated POST is refused with 413 long before it is all sent", async () => {
    const total = 50 * 1024 * 1024;
    const r = await rawPost("/api/admin/sites", { "content-type": "application/json", origin: suite.srv.url }, { declared: total, total });
    expect(r.status).toBe(413);
    expect(r.bytesSent).toBeLessThan(total / 4);
  });

  it("a chunked JSON body (no Content-Length) above the JSON limit is cut off with 413", async () => {
    const r = await rawPost(
      "/api/admin/sites",
      { "content-type": "application/json", origin: suite.srv.url, cookie: admin.header() },
      { total: BODY_LIMITS.json * 4 },
    );
    expect(r.status, r.text).toBe(413);
  });

  it("the step-test upload has its own, larger limit", async () => {
    const path = `/api/loops/${suite.fx.a.loopId}/step-tests`;
    const headers = { "content-type": "multipart/form-data; boundary=x", origin: suite.srv.url, cookie: admin.header() };
    const over = await rawPost(path, headers, { declared: 7 * 1024 * 1024, total: 7 * 1024 * 1024 });
    expect(over.status).toBe(413);
    // 1 MB is far above the JSON limit but within the upload's: it reaches the route (a bad form is 422).
    const within = await rawPost(path, headers, { declared: 1024 * 1024, total: 1024 * 1024 });
    expect(within.status, within.text).toBe(422);
  });
});
