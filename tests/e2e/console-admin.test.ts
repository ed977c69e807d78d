/**
 * Administration end to end in Chromium against the real server and the demo seed (no
 * simulators needed): invitation by e-mail through the SMTP sink with a one-time link to set a
 * password; device credentials (secret shown once, revoke with a reason); an engineer creates a
 * loop and changes its estimation period with a change reason, both in the change log; the API
 * refuses the same changes from a viewer and refuses bad input with a message.
 */
import type { Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { DEMO_PASSWORD } from "@/lib/seed";
import { artifactPath, launchBrowser, type TestBrowser } from "../setup/browser";
import { startTestServer, type TestServer } from "../setup/server";

let srv: TestServer;
let browser: TestBrowser;

beforeAll(async () => {
  srv = await startTestServer({ seed: true });
  browser = await launchBrowser({ viewport: { width: 1440, height: 1000 } });
}, 300_000);

afterAll(async () => {
  await browser?.close();
  await srv?.stop();
});

async function signIn(page: Page, email: string, password = DEMO_PASSWORD): Promise<void> {
  await browser.context.clearCookies();
  await page.goto(`${srv.url}/signin`);
  await page.getByLabel("E-mail").fill(email);
  await page.getByLabel("Password").fill(password);
  await page.getByRole("button", { name: "Sign in" }).click();
  await page.waitForURL((u) => !u.pathname.startsWith("/signin"), { timeout: 30_000 });
}

describe("administration in Chromium", () => {
  it("an admin invites by e-mail; the one-time link sets a password once; the new user signs in with the invited role", async () => {
    const page = await browser.context.newPage();
    await signIn(page, "admin@vantrell.example");
    await page.goto(`${srv.url}/admin?section=users`);
    await page.getByTestId("invite-email").fill("new.operator@vantrell.example");
    await page.getByTestId("invite-role").selectOption("operator");
    await page.getByRole("button", { name: "Invite" }).click();
    await expect.poll(() => page.getByRole("status").textContent(), { timeout: 15_000 }).toContain("Invitation sent to new.operator@vantrell.example");

    // The SMTP sink received it; the admin's outbox lists it with the link.
    let link = "";
    await expect
      .poll(
        async () => {
          const r = await page.request.get(`${srv.url}/api/outbox`);
          const body = (await r.json()) as { messages: { to: string[]; text: string }[] };
          const m = body.messages.find((x) => x.to.includes("new.operator@vantrell.example"));
          link = /https?:\/\/\S+\/invite\/[A-Za-z0-9_-]+/.exec(m?.text ?? "")?.[0] ?? "";
          return link;
        },
        { timeout: 15_000 },
      )
      .not.toBe("");
    await page.goto(`${srv.url}/admin?section=outbox`);
    await page.getByTestId("admin-outbox").waitFor();
    await page.screenshot({ path: artifactPath("console-admin-outbox-invite.png"), fullPage: true });

    const token = link.split("/invite/")[1]!;
    await browser.context.clearCookies();
    await page.goto(`${srv.url}/invite/${token}`);
    await page.getByLabel("Your name").fill("Nell Operator");
    await page.getByLabel("New password (at least 12 characters)").fill("correct horse battery");
    await page.getByLabel("Repeat the password").fill("correct horse battery");
    await page.screenshot({ path: artifactPath("console-invite.png") });
    await page.getByRole("button", { name: "Set password" }).click();
    await expect.poll(() => page.getByRole("status").textContent(), { timeout: 15_000 }).toContain("Password set");

    // One time only.
    await page.goto(`${srv.url}/invite/${token}`);
    expect(await page.getByRole("heading", { level: 1 }).textContent()).toContain("This link cannot be used");

    await signIn(page, "new.operator@vantrell.example", "correct horse battery");
    expect(await page.locator("header").getByTestId("user-role").textContent()).toBe("operator");
    // An operator has no administration.
    expect(await page.getByRole("navigation", { name: "Console" }).getByRole("link", { name: "Admin" }).count()).toBe(0);
    expect((await page.request.get(`${srv.url}/api/admin/users`)).status()).toBe(403);
    await page.close();
  }, 120_000);

  it("an admin creates a device credential, sees the secret once, and revokes it with a reason", async () => {
    const page = await browser.context.newPage();
    await signIn(page, "admin@vantrell.example");
    await page.goto(`${srv.url}/admin?section=devices`);
    await page.getByLabel("Device name").fill("Line 4 gateway");
    await page.getByRole("button", { name: "Create credential" }).click();
    const panel = page.getByTestId("device-secret");
    await panel.waitFor({ timeout: 15_000 });
    const secret = (await panel.locator("dd").nth(1).textContent()) ?? "";
    expect(secret).toMatch(/^rgs_/);
    await page.screenshot({ path: artifactPath("console-admin-device-secret.png"), fullPage: true });

    const list = (await (await page.request.get(`${srv.url}/api/admin/devices`)).json()) as { devices: { id: number; name: string; revokedAt: string | null }[] };
    const dev = list.devices.find((d) => d.name === "Line 4 gateway");
    expect(dev).toBeTruthy();
    // The list never carries the secret.
    expect(JSON.stringify(list)).not.toContain(secret);
    const bad = await page.request.delete(`${srv.url}/api/admin/devices/${dev!.id}`, { data: {} });
    expect(bad.status()).toBe(422);
    const ok = await page.request.delete(`${srv.url}/api/admin/devices/${dev!.id}`, { data: { reason: "gateway replaced" } });
    expect(ok.status()).toBe(200);
    expect(((await ok.json()) as { device: { revokedAt: string | null } }).device.revokedAt).not.toBeNull();
    const log = (await (await page.request.get(`${srv.url}/api/admin/config-changes?entity=device_credential`)).json()) as { changes: { reason: string | null }[] };
    expect(log.changes.map((c) => c.reason)).toContain("gateway replaced");
    await page.close();
  }, 120_000);

  it("an engineer creates a loop and changes its estimation period with a reason; a viewer is refused", async () => {
    const page = await browser.context.newPage();
    await signIn(page, "engineer@vantrell.example");
    await page.goto(`${srv.url}/loops/new`);
    const form = page.getByTestId("loop-form");
    await form.waitFor();
    const site = page.locator("#f-siteId");
    await expect.poll(() => site.locator("option").count(), { timeout: 15_000 }).toBeGreaterThan(1);
    await site.selectOption({ index: 1 });
    await page.locator("#f-tag").fill("FIC-9001");
    await page.locator("#f-description").fill("Trial flow loop");
    // No reason yet: the form refuses and says why.
    await page.getByTestId("loop-save").click();
    await expect.poll(() => form.getByText("Give a change reason").count()).toBeGreaterThan(0);
    await page.locator("#f-reason").fill("commissioning the new line");
    await page.getByTestId("loop-save").click();
    await page.waitForURL(/\/loops\/\d+$/, { timeout: 30_000 }).catch(async (e: unknown) => {
      await page.screenshot({ path: artifactPath("console-loop-new-failed.png"), fullPage: true });
      const errs = await form.locator(".text-urgent").allTextContents();
      throw new Error(`the new loop was not saved: ${errs.join(" | ") || String(e)}`);
    });
    const id = Number(new URL(page.url()).pathname.split("/").pop());
    expect(id).toBeGreaterThan(0);

    await page.goto(`${srv.url}/loops/${id}/edit`);
    await page.locator("#f-estimationPeriodS").fill("5");
    await page.locator("#f-reason").fill("poles crowd at z = 1 at 1 s");
    await page.locator("#f-mocReference").fill("MOC-2026-118");
    await page.getByTestId("loop-save").click();
    await page.waitForURL(new RegExp(`/loops/${id}$`), { timeout: 30_000 });
    const cfg = (await (await page.request.get(`${srv.url}/api/admin/loops/${id}`)).json()) as { loop: { estimationPeriodS: number } };
    expect(cfg.loop.estimationPeriodS).toBe(5);
    await page.goto(`${srv.url}/loops/${id}/edit`);
    const log = page.getByTestId("config-log");
    await expect.poll(() => log.textContent(), { timeout: 15_000 }).toContain("MOC-2026-118");
    expect(await log.textContent()).toContain("estimationPeriodS: 1 → 5");
    await page.screenshot({ path: artifactPath("console-loop-edit.png"), fullPage: true });

    // Bad input is a 422 with the field named; nothing changes.
    const bad = await page.request.patch(`${srv.url}/api/loops/${id}`, { data: { estimationPeriodS: -1, reason: "typo test" } });
    expect(bad.status()).toBe(422);
    expect(((await bad.json()) as { error: string }).error).toMatch(/estimationPeriodS/);

    // The engineer belongs to two tenants: the viewer must be of the tenant the loop was made in.
    const who = (await (await page.request.get(`${srv.url}/api/session`)).json()) as { context: { tenantSlug: string } };
    const viewer = who.context.tenantSlug === "vantrell" ? "viewer@vantrell.example" : "viewer@orrinvale.example";
    await signIn(page, viewer);
    const refused = await page.request.patch(`${srv.url}/api/loops/${id}`, { data: { estimationPeriodS: 2, reason: "viewer tries" } });
    expect(refused.status()).toBe(403);
    expect((await page.request.get(`${srv.url}/api/loops/${id}`)).status()).toBe(200);
    await page.goto(`${srv.url}/loops/${id}`);
    await page.screenshot({ path: artifactPath("console-loop-new-viewer.png"), fullPage: true });
    await page.getByRole("heading", { name: "FIC-9001" }).waitFor({ timeout: 30_000 });
    expect(await page.getByRole("link", { name: "Edit loop" }).count()).toBe(0);
    await page.close();
  }, 180_000);
});
