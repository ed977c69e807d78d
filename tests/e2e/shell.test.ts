/**
 * End to end in Debian's Chromium (playwright-core): sign in through the form, see the console
 * shell with the tenant's name, the navigation for the role and the standing caution; switch
 * theme and tenant; sign out; accept an invitation with an existing account by signing in; the
 * pages run under the Content-Security-Policy without a violation and cannot be framed.
 * Screenshots go to tests/artifacts/ (git-ignored).
 */
import type { Page } from "playwright-core";
import { describe, expect, it } from "vitest";
import { CAUTION_TEXT } from "@/app/(console)/_shell/caution";
import { mailOf } from "@/server/mail";
import { FIXTURE_PASSWORD } from "../auth/fixture";
import { authedFetch, signIn } from "../auth/helpers";
import { artifactPath } from "../setup/browser";
import { signInWithForm, setUpServerSuite } from "../helpers/server-suite";

const suite = setUpServerSuite({ seed: false, browser: true });

/**
 * Signing out navigates twice (next-auth's redirect and the session keeper's), so a wait on one
 * navigation can see it aborted by the other: wait for where the page ends up instead.
 */
async function expectSignInPage(page: Page): Promise<void> {
  await expect.poll(() => new URL(page.url()).pathname, { timeout: 30_000 }).toBe("/signin");
  await page.getByRole("button", { name: /sign in/i }).waitFor();
}

/** Open a console URL while signed out: the server redirects to the sign-in page. */
async function gotoSignedOut(page: Page, url: string): Promise<void> {
  await page.goto(url).catch((err: unknown) => {
    if (!/ERR_ABORTED/.test(String(err))) throw err;
  });
  await expectSignInPage(page);
}

/** Sign in through the form the console redirects to. */
function signInThroughForm(page: Page, email: string): Promise<void> {
  return signInWithForm(page, suite.srv.url, email, FIXTURE_PASSWORD, "/");
}

describe("console shell in Chromium", () => {
  it("a wrong password shows our message and stays on the sign-in page", async () => {
    const page = await suite.browser.context.newPage();
    await page.goto(`${suite.srv.url}/signin`);
    await page.getByLabel("E-mail").fill(suite.fx.a.users.viewer.email);
    await page.getByLabel("Password").fill("wrong-password");
    await page.getByRole("button", { name: "Sign in" }).click();
    await expect.poll(() => page.locator("#signin-error").textContent()).toContain("The e-mail or password is not right.");
    expect(new URL(page.url()).pathname).toBe("/signin");
    await page.screenshot({ path: artifactPath("signin-error.png") });
    await page.close();
  });

  it("an admin signs in and sees the shell: tenant, name, role, full navigation, the caution", async () => {
    const page = await suite.browser.context.newPage();
    await signInThroughForm(page, suite.fx.a.users.admin.email);
    const header = page.locator("header");
    await expect.poll(() => header.getByTestId("tenant-name").textContent()).toContain(suite.fx.a.name);
    expect(await header.getByTestId("user-role").textContent()).toBe("admin");
    const nav = page.getByRole("navigation", { name: "Console" });
    for (const label of ["Control room", "Loops", "Alarms", "Reports", "Admin"]) {
      expect(await nav.getByRole("link", { name: label }).count(), label).toBe(1);
    }
    const caution = page.getByRole("note", { name: "Caution" });
    expect(await caution.textContent()).toContain(CAUTION_TEXT);
    expect(await caution.isVisible()).toBe(true);
    await page.screenshot({ path: artifactPath("shell-dark.png") });

    // Theme toggle: light for desks, remembered in a cookie across a reload.
    await page.getByRole("button", { name: "Light theme" }).click();
    expect(await page.locator("html").getAttribute("data-theme")).toBe("light");
    await page.reload();
    expect(await page.locator("html").getAttribute("data-theme")).toBe("light");
    await page.screenshot({ path: artifactPath("shell-light.png") });
    await page.getByRole("button", { name: "Dark theme" }).click();

    // Reports placeholder says honestly that nothing is there yet.
    await nav.getByRole("link", { name: "Reports" }).click();
    await page.waitForURL(/\/reports$/);
    expect(await page.getByRole("heading", { level: 1 }).textContent()).toBe("Reports");

    // Sign out returns to the sign-in page; the console is closed again.
    await page.getByRole("button", { name: "Sign out" }).click();
    await expectSignInPage(page);
    await gotoSignedOut(page, `${suite.srv.url}/reports`);
    await page.close();
  });

  it("a viewer has no Admin link, and the keyboard reaches the skip link first", async () => {
    const page = await suite.browser.context.newPage();
    await signInThroughForm(page, suite.fx.b.users.viewer.email);
    const nav = page.getByRole("navigation", { name: "Console" });
    await nav.getByRole("link", { name: "Loops" }).waitFor();
    expect(await nav.getByRole("link", { name: "Admin" }).count()).toBe(0);
    await page.keyboard.press("Tab");
    expect(await page.evaluate(() => document.activeElement?.textContent)).toBe("Skip to content");
    await page.getByRole("button", { name: "Sign out" }).click();
    await expectSignInPage(page);
    await page.close();
  });

  it("a member of two tenants switches tenant from the header", async () => {
    const page = await suite.browser.context.newPage();
    await signInThroughForm(page, suite.fx.both.email);
    const select = page.locator("header select");
    await select.waitFor();
    const before = await select.inputValue();
    const target = Number(before) === suite.fx.a.id ? suite.fx.b : suite.fx.a;
    await select.selectOption(String(target.id));
    await expect.poll(async () => page.locator("header select").inputValue(), { timeout: 15_000 }).toBe(String(target.id));
    await page.waitForLoadState("networkidle").catch(() => undefined);
    await page.screenshot({ path: artifactPath("shell-tenant-switched.png") });
    await page.close();
  });
});

describe("an invitation to an existing account", () => {
  it("is accepted by signing in as that account; the page never offers to set its password", async () => {
    const invitee = suite.fx.b.users.operator;
    const admin = await signIn(suite.srv.url, suite.fx.a.users.admin.email, FIXTURE_PASSWORD);
    const mail = mailOf(suite.srv.server.ctx)!;
    const before = mail.outbox().length;
    const res = await authedFetch(suite.srv.url, admin.jar, "/api/admin/users", {
      method: "POST",
      headers: { "content-type": "application/json" },
      body: JSON.stringify({ email: invitee.email, role: "viewer" }),
    });
    expect(res.status).toBe(201);
    const [msg] = (await mail.waitForMessages(before + 1)).slice(before);
    const token = /\/invite\/([A-Za-z0-9_-]+)/.exec(msg?.text ?? "")?.[1];
    expect(token).toBeTruthy();

    await suite.browser.context.clearCookies();
    const page = await suite.browser.context.newPage();
    await page.goto(`${suite.srv.url}/invite/${token}`);
    expect(await page.getByLabel("New password (at least 12 characters)").count()).toBe(0);
    await page.getByRole("link", { name: `Sign in as ${invitee.email}` }).click();
    await page.waitForURL(/\/signin/);
    await page.getByLabel("E-mail").fill(invitee.email);
    await page.getByLabel("Password").fill(FIXTURE_PASSWORD);
    await page.getByRole("button", { name: "Sign in" }).click();
    await page.waitForURL((u) => u.pathname === `/invite/${token}`, { timeout: 30_000 });
    await page.getByRole("button", { name: "Accept invitation" }).click();
    await expect.poll(() => page.getByRole("status").textContent(), { timeout: 15_000 }).toContain("Invitation accepted");
    expect(await suite.srv.db.models.Membership.count({ where: { userId: invitee.id, tenantId: suite.fx.a.id } })).toBe(1);
    // The account's password still works.
    expect((await signIn(suite.srv.url, invitee.email, FIXTURE_PASSWORD)).session).toBeTruthy();
    await page.close();
  });
});

describe("security headers in Chromium", () => {
  it("the console runs under its Content-Security-Policy with no violation, and refuses to be framed", async () => {
    const page = await suite.browser.context.newPage();
    const messages: string[] = [];
    page.on("console", (m) => messages.push(m.text()));
    await page.addInitScript(() => {
      const w = window as unknown as { __csp: string[] };
      w.__csp = [];
      document.addEventListener("securitypolicyviolation", (e) => w.__csp.push(`${e.violatedDirective} ${e.blockedURI}`));
    });
    await suite.browser.context.clearCookies();
    await signInThroughForm(page, suite.fx.a.users.admin.email);
    const nav = page.getByRole("navigation", { name: "Console" });
    for (const label of ["Loops", "Alarms", "Admin", "Control room"]) {
      await nav.getByRole("link", { name: label }).click();
      await page.waitForLoadState("networkidle").catch(() => undefined);
      expect(await page.evaluate(() => (window as unknown as { __csp: string[] }).__csp), label).toEqual([]);
    }
    await page.goto(`${suite.srv.url}/loops/${suite.fx.a.loopId}`);
    await page.waitForLoadState("networkidle").catch(() => undefined);
    // Hydrated (scripts ran): the theme toggle works.
    await page.getByRole("button", { name: "Light theme" }).click();
    expect(await page.locator("html").getAttribute("data-theme")).toBe("light");
    await page.getByRole("button", { name: "Dark theme" }).click();
    expect(await page.evaluate(() => (window as unknown as { __csp: string[] }).__csp)).toEqual([]);
    expect(messages.filter((m) => /Content Security Policy/i.test(m))).toEqual([]);

    // frame-ancestors 'none': another page cannot frame the console (clickjacking).
    const framer = await suite.browser.context.newPage();
    const framerLog: string[] = [];
    framer.on("console", (m) => framerLog.push(m.text()));
    await framer.setContent(`<iframe src="${suite.srv.url}/signin"></iframe>`);
    await expect.poll(() => framerLog.some((m) => /frame-ancestors/.test(m)), { timeout: 15_000 }).toBe(true);
    await framer.close();
    await page.close();
  });
});

describe("palette contrast (WCAG 2.1 SC 1.4.3, AA: 4.5:1 for text)", () => {
  // Relative luminance and contrast ratio as defined in WCAG 2.1 ("relative luminance", "contrast ratio").
  const channel = (v: number) => (v <= 0.03928 ? v / 12.92 : ((v + 0.055) / 1.055) ** 2.4);
  const luminance = (hex: string) => {
    const [r, g, b] = [1, 3, 5].map((i) => channel(parseInt(hex.slice(i, i + 2), 16) / 255));
    return 0.2126 * r! + 0.7152 * g! + 0.0722 * b!;
  };
  const ratio = (a: string, b: string) => {
    const [hi, lo] = [luminance(a), luminance(b)].sort((x, y) => y - x);
    return (hi! + 0.05) / (lo! + 0.05);
  };

  it("the WCAG formula gives the known extremes: black on white 21:1, equal colours 1:1", () => {
    expect(ratio("#000000", "#ffffff")).toBeCloseTo(21, 6);
    expect(ratio("#777777", "#777777")).toBe(1);
  });

  for (const theme of ["dark", "light"] as const) {
    it(`every text role of the ${theme} theme reaches 4.5:1 on ground, surface and raised`, async () => {
      const fs = await import("node:fs");
      const css = fs.readFileSync(new URL("../../app/globals.css", import.meta.url), "utf8");
      const block = theme === "dark" ? /\[data-theme="dark"\] \{([^}]*)\}/.exec(css) : /\[data-theme="light"\] \{([^}]*)\}/.exec(css);
      expect(block).not.toBeNull();
      const vars = Object.fromEntries([...block![1]!.matchAll(/--rg-([a-z-]+):\s*(#[0-9a-f]{6})/g)].map((m) => [m[1]!, m[2]!]));
      for (const fg of ["ink", "muted", "accent", "urgent", "high", "low", "suppressed", "ok"]) {
        for (const bg of ["ground", "surface", "raised"]) {
          expect(ratio(vars[fg]!, vars[bg]!), `${theme} ${fg} on ${bg}`).toBeGreaterThanOrEqual(4.5);
        }
      }
      expect(ratio(vars["accent-ink"]!, vars.accent!)).toBeGreaterThanOrEqual(4.5);
    });
  }
});
