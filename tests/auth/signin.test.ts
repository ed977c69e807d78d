/**
 * Sign-in through the real next-auth route handlers on the real custom server (port 0, real
 * MariaDB with the invented fixture of tests/auth/fixture.ts). Throttling limits are common practice (OWASP authentication
 * guidance: lock out after a handful of failures) and set in lib/auth/throttle.ts.
 */
import { describe, expect, it } from "vitest";
import { SIGNIN_LIMITS } from "@/lib/auth/throttle";
import { setUpServerSuite } from "../helpers/server-suite";
import { FIXTURE_PASSWORD as PASSWORD } from "./fixture";
import { authedFetch, signIn, signInFrom } from "./helpers";

const suite = setUpServerSuite({ seed: false });


describe("sign-in with e-mail and password", () => {
  it("issues a session cookie for the right password, and the session names the user and tenant", async () => {
    const operator = suite.fx.a.users.operator;
    const r = await signIn(suite.srv.url, operator.email, PASSWORD);
    expect(r.error).toBeNull();
    expect(r.session).toBeTruthy();
    const me = await authedFetch(suite.srv.url, r.jar, "/api/session");
    expect(me.status).toBe(200);
    const body = (await me.json()) as { context: { email: string; role: string; tenantSlug: string } };
    expect(body.context.email).toBe(operator.email);
    expect(body.context.role).toBe("operator");
    expect(body.context.tenantSlug).toBe(suite.fx.a.slug);
  });

  it("accepts the e-mail in any letter case and with surrounding spaces", async () => {
    const r = await signIn(suite.srv.url, `  ${suite.fx.a.users.operator.email.toUpperCase()} `, PASSWORD);
    expect(r.session).toBeTruthy();
  });

  it("issues no session for a wrong password or an unknown account", async () => {
    const wrong = await signIn(suite.srv.url, suite.fx.b.users.viewer.email, "not-the-password");
    expect(wrong.session).toBeNull();
    expect(wrong.error).toBe("CredentialsSignin");
    const unknown = await signIn(suite.srv.url, "nobody@nowhere.example", PASSWORD);
    expect(unknown.session).toBeNull();
    const me = await authedFetch(suite.srv.url, wrong.jar, "/api/session");
    expect(me.status).toBe(401);
  });

  it("refuses a forged session cookie", async () => {
    const r = await fetch(`${suite.srv.url}/api/session`, {
      headers: { cookie: "next-auth.session-token=eyJhbGciOiJkaXIiLCJlbmMiOiJBMjU2R0NNIn0..forged.forged.forged" },
    });
    expect(r.status).toBe(401);
  });

  it(`throttles after ${SIGNIN_LIMITS.perAccount.points} failures: even the right password is refused, with the wait in seconds`, async () => {
    const email = suite.fx.b.users.engineer.email;
    for (let i = 0; i < SIGNIN_LIMITS.perAccount.points; i++) {
      const r = await signIn(suite.srv.url, email, `wrong-${i}`);
      expect(r.error).toBe("CredentialsSignin");
    }
    const blocked = await signIn(suite.srv.url, email, PASSWORD);
    expect(blocked.session).toBeNull();
    expect(blocked.error).toMatch(/^Too many attempts\. Try again in \d+ s\.$/);
    const seconds = Number(/in (\d+) s/.exec(blocked.error ?? "")?.[1]);
    expect(seconds).toBeGreaterThan(0);
    expect(seconds).toBeLessThanOrEqual(SIGNIN_LIMITS.perAccount.durationS);
    // Another account from the same address is not blocked by this account's failures.
    const other = await signIn(suite.srv.url, suite.fx.b.users.admin.email, PASSWORD);
    expect(other.session).toBeTruthy();
  });

  it("counts attempts per client address taken from the connection, not from a header the client sends", async () => {
    // 127.0.0.0/8 is loopback on Linux: 127.0.0.2 and 127.0.0.3 are other client addresses.
    const email = suite.fx.a.users.engineer.email;
    for (let i = 0; i < SIGNIN_LIMITS.perAccount.points; i++) {
      expect((await signInFrom(suite.srv.url, "127.0.0.2", email, `wrong-${i}`)).error).toBe("CredentialsSignin");
    }
    const blocked = await signInFrom(suite.srv.url, "127.0.0.2", email, PASSWORD);
    expect(blocked.session).toBe(false);
    expect(blocked.error).toMatch(/^Too many attempts/);
    // Claiming another address in our header does not help: the server overwrites it.
    const spoofed = await signInFrom(suite.srv.url, "127.0.0.2", email, PASSWORD, { "x-rimguard-client-ip": "10.9.9.9" });
    expect(spoofed.error).toMatch(/^Too many attempts/);
    // The same account from another address is not blocked.
    const elsewhere = await signInFrom(suite.srv.url, "127.0.0.3", email, PASSWORD);
    expect(elsewhere).toEqual({ session: true, error: null });
  });

  it("signing out revokes the session on the server, not only in the browser", async () => {
    const r = await signIn(suite.srv.url, suite.fx.a.users.viewer.email, PASSWORD);
    const stolen = r.jar.header();
    const csrf = (await (await authedFetch(suite.srv.url, r.jar, "/api/auth/csrf")).json()) as { csrfToken: string };
    const out = await authedFetch(suite.srv.url, r.jar, "/api/auth/signout", {
      method: "POST",
      headers: { "content-type": "application/x-www-form-urlencoded" },
      body: new URLSearchParams({ csrfToken: csrf.csrfToken, json: "true" }),
    });
    expect(out.status).toBeLessThan(400);
    const replay = await fetch(`${suite.srv.url}/api/session`, { headers: { cookie: stolen } });
    expect(replay.status).toBe(401);
  });

  it("sign out everywhere ends every session of the user", async () => {
    const a = await signIn(suite.srv.url, suite.fx.b.users.operator.email, PASSWORD);
    const b = await signIn(suite.srv.url, suite.fx.b.users.operator.email, PASSWORD);
    expect((await authedFetch(suite.srv.url, b.jar, "/api/session")).status).toBe(200);
    const res = await authedFetch(suite.srv.url, a.jar, "/api/session/signout-everywhere", { method: "POST" });
    expect(res.status).toBe(200);
    expect((await authedFetch(suite.srv.url, b.jar, "/api/session")).status).toBe(401);
    expect((await authedFetch(suite.srv.url, a.jar, "/api/session")).status).toBe(401);
  });

  it("the sign-in page renders the form and the standing caution", async () => {
    const res = await fetch(`${suite.srv.url}/signin`);
    expect(res.status).toBe(200);
    const html = await res.text();
    expect(html).toContain('name="password"');
    expect(html).toContain("not a safety system");
  });

  it("the console redirects to the sign-in page when signed out", async () => {
    const res = await fetch(`${suite.srv.url}/`, { redirect: "manual" });
    expect([302, 303, 307, 308]).toContain(res.status);
    expect(res.headers.get("location") ?? "").toContain("/signin");
  });
});
