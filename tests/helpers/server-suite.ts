/**
 * One start-up for the test files that run against the real server: `setUpServerSuite` registers
 * the hooks that start it (and, when asked, the invented auth fixture and a Chromium) before the
 * file's own hooks, and stop them after, and returns a holder the tests read once the hooks ran.
 * `signInWithForm` signs a browser page in through the real sign-in form.
 */
import type { Page } from "playwright-core";
import { afterAll, beforeAll } from "vitest";
import { createAuthFixture, type AuthFixture } from "../auth/fixture";
import { lateBound } from "./late-bound";
import { launchBrowser, type TestBrowser } from "../setup/browser";
import { startTestServer, type TestServer } from "../setup/server";

export interface SuiteOptions {
  /** Seed the demo scenario (true) or create the auth fixture on an empty database (false). */
  seed: boolean;
  /** Launch Chromium with this viewport (`true`: its default one); none when left out. */
  browser?: { width: number; height: number } | true;
}

export interface ServerSuite {
  readonly srv: TestServer;
  /** The auth fixture; only on a suite without the demo seed. */
  readonly fx: AuthFixture;
  /** Chromium; only when the options asked for it. */
  readonly browser: TestBrowser;
}

export function setUpServerSuite(opts: SuiteOptions): ServerSuite {
  let srv: TestServer | undefined;
  let fx: AuthFixture | undefined;
  let browser: TestBrowser | undefined;
  beforeAll(async () => {
    srv = await startTestServer({ seed: opts.seed });
    if (!opts.seed) fx = await createAuthFixture(srv.db.models);
    if (opts.browser) browser = await launchBrowser(opts.browser === true ? {} : { viewport: opts.browser });
  }, 300_000);
  afterAll(async () => {
    await browser?.close();
    await srv?.stop();
  });
  return lateBound<ServerSuite>("server suite", () => ({ srv, fx, browser }));
}

/** Sign in through the form from `startPath` (cookies cleared first) and wait to leave /signin. */
export async function signInWithForm(page: Page, baseUrl: string, email: string, password: string, startPath = "/signin"): Promise<void> {
  await page.context().clearCookies();
  await page.goto(`${baseUrl}${startPath}`);
  if (startPath !== "/signin") await page.waitForURL(/\/signin/);
  await page.getByLabel("E-mail").fill(email);
  await page.getByLabel("Password").fill(password);
  await page.getByRole("button", { name: "Sign in" }).click();
  await page.waitForURL((u) => !u.pathname.startsWith("/signin"), { timeout: 30_000 });
}

/** A new page of the suite's browser, signed in through the form, then at `path` when given. */
export async function openSignedIn(suite: ServerSuite, email: string, password: string, path?: string): Promise<Page> {
  const page = await suite.browser.context.newPage();
  await signInWithForm(page, suite.srv.url, email, password);
  if (path !== undefined) await page.goto(`${suite.srv.url}${path}`);
  return page;
}
