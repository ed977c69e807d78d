/**
 * Administration end to end in Chromium against the real server and the demo seed (no
 * simulators needed): invitation by e-mail through the SMTP sink with a one-time link to set a
 * password (the admin's outbox withholds the link); device credentials (secret shown once, revoke with a reason); an engineer creates a
 * loop and changes its estimation period with a change reason, both in the change log; the API
 * refuses the same changes from a viewer and refuses bad input with a message. Admin actions that
 * need a change reason (device revoke, role change, member removal, rule deletion, new operator
 * area) ask for it in an in-page dialog, and the reason reaches the change log.
 */
import type { Page } from "playwright-core";
import { describe, expect, it } from "vitest";
import { DEMO_PASSWORD } from "@/lib/data/seed";
import { artifactPath } from "../setup/browser";
import { mailOf } from "@/server/mail";
import { openSignedIn, signInWithForm, setUpServerSuite } from "../helpers/server-suite";

const suite = setUpServerSuite({ seed: true, browser: { width: 1440, height: 1000 } });

function signIn(page: Page, email: string, password = DEMO_PASSWORD): Promise<void> {
  return signInWithForm(page, suite.srv.url, email, password);
}

/** The data-testid of the element that has focus (null when none has one). */
function focusedTestId(page: Page): Promise<string | null> {
  return page.evaluate(() => document.activeElement?.getAttribute("data-testid") ?? null);
}

interface Change {
  entity: string;
  entityId: number;
  reason: string | null;
  diff: Record<string, { from: unknown; to: unknown }>;
}

async function changesOf(page: Page, entity: string): Promise<Change[]> {
  const r = await page.request.get(`${suite.srv.url}/api/admin/config-changes?entity=${entity}`);
  expect(r.status()).toBe(200);
  return ((await r.json()) as { changes: Change[] }).changes;
}

describe("administration in Chromium", () => {
  it("an admin invites by e-mail; the one-time link sets a password once; the new user signs in with the invited role", async () => {
    const page = await openSignedIn(suite, "admin@vantrell.example", DEMO_PASSWORD, "/admin?section=users");
    await page.getByTestId("invite-email").fill("new.operator@vantrell.example");
    await page.getByTestId("invite-role").selectOption("operator");
    await page.getByRole("button", { name: "Invite" }).click();
    await expect.poll(() => page.getByRole("status").textContent(), { timeout: 15_000 }).toContain("Invitation sent to new.operator@vantrell.example");

    // The SMTP sink received it. The admin's outbox lists the message but withholds the one-time
    // link (only the invitee's mailbox may hold it); the test reads the link from the sink itself.
    const mail = mailOf(suite.srv.server.ctx)!;
    let link = "";
    await expect
      .poll(
        () => {
          const m = mail.outbox().find((x) => x.to.includes("new.operator@vantrell.example"));
          link = /https?:\/\/\S+\/invite\/[A-Za-z0-9_-]+/.exec(m?.text ?? "")?.[0] ?? "";
          return link;
        },
        { timeout: 15_000 },
      )
      .not.toBe("");
    const listed = (await (await page.request.get(`${suite.srv.url}/api/outbox`)).json()) as { messages: { to: string[]; text: string }[] };
    const shown = listed.messages.find((x) => x.to.includes("new.operator@vantrell.example"));
    expect(shown?.text).toContain("link withheld");
    expect(shown?.text).not.toContain(link);
    await page.goto(`${suite.srv.url}/admin?section=outbox`);
    await page.getByTestId("admin-outbox").waitFor();
    await page.screenshot({ path: artifactPath("console-admin-outbox-invite.png"), fullPage: true });

    const token = link.split("/invite/")[1]!;
    await suite.browser.context.clearCookies();
    await page.goto(`${suite.srv.url}/invite/${token}`);
    await page.getByLabel("Your name").fill("Nell Operator");
    await page.getByLabel("New password (at least 12 characters)").fill("correct horse battery");
    await page.getByLabel("Repeat the password").fill("correct horse battery");
    await page.screenshot({ path: artifactPath("console-invite.png") });
    await page.getByRole("button", { name: "Set password" }).click();
    await expect.poll(() => page.getByRole("status").textContent(), { timeout: 15_000 }).toContain("Password set");

    // One time only.
    await page.goto(`${suite.srv.url}/invite/${token}`);
    expect(await page.getByRole("heading", { level: 1 }).textContent()).toContain("This link cannot be used");

    await signIn(page, "new.operator@vantrell.example", "correct horse battery");
    expect(await page.locator("header").getByTestId("user-role").textContent()).toBe("operator");
    // An operator has no administration.
    expect(await page.getByRole("navigation", { name: "Console" }).getByRole("link", { name: "Admin" }).count()).toBe(0);
    expect((await page.request.get(`${suite.srv.url}/api/admin/users`)).status()).toBe(403);
    await page.close();
  }, 120_000);

  it("an admin creates a device credential, sees the secret once, and revokes it with a reason", async () => {
    const page = await openSignedIn(suite, "admin@vantrell.example", DEMO_PASSWORD, "/admin?section=devices");
    await page.getByLabel("Device name").fill("Line 4 gateway");
    await page.getByRole("button", { name: "Create credential" }).click();
    const panel = page.getByTestId("device-secret");
    await panel.waitFor({ timeout: 15_000 });
    const secret = (await panel.locator("dd").nth(1).textContent()) ?? "";
    expect(secret).toMatch(/^rgs_/);
    await page.screenshot({ path: artifactPath("console-admin-device-secret.png"), fullPage: true });

    const list = (await (await page.request.get(`${suite.srv.url}/api/admin/devices`)).json()) as { devices: { id: number; name: string; revokedAt: string | null }[] };
    const dev = list.devices.find((d) => d.name === "Line 4 gateway");
    expect(dev).toBeTruthy();
    // The list never carries the secret.
    expect(JSON.stringify(list)).not.toContain(secret);
    const bad = await page.request.delete(`${suite.srv.url}/api/admin/devices/${dev!.id}`, { data: {}, headers: { origin: suite.srv.url } });
    expect(bad.status()).toBe(422);

    // Revoke in the page: an in-page dialog (no window.prompt) with the caution, Escape leaves it
    // and gives focus back to the button, an empty reason is refused with its message.
    const revokeButton = page.getByTestId("admin-devices").locator("tr", { hasText: "Line 4 gateway" }).getByRole("button", { name: "Revoke" });
    await revokeButton.click();
    const dialog = page.getByRole("dialog", { name: "Revoke device credential" });
    await dialog.waitFor();
    expect(await dialog.getByTestId("dialog-caution").textContent()).toContain("stale");
    expect(await focusedTestId(page)).toBe("reason-input");
    await page.keyboard.press("Escape");
    await dialog.waitFor({ state: "detached" });
    expect(await page.evaluate(() => document.activeElement?.textContent)).toBe("Revoke");
    expect((await (await page.request.get(`${suite.srv.url}/api/admin/devices`)).json() as { devices: { id: number; revokedAt: string | null }[] }).devices.find((d) => d.id === dev!.id)?.revokedAt).toBeNull();

    await revokeButton.click();
    await dialog.waitFor();
    // Tab from the last control comes back to the first: focus stays in the dialog.
    await dialog.getByTestId("action-submit").focus();
    await page.keyboard.press("Tab");
    expect(await focusedTestId(page)).toBe("reason-input");
    await dialog.getByTestId("action-submit").click();
    await expect.poll(() => dialog.getByText("Give a reason (at least 3 characters).").count()).toBe(1);
    expect(await dialog.getByTestId("reason-input").getAttribute("aria-invalid")).toBe("true");
    await dialog.getByTestId("reason-input").fill("gateway replaced");
    await page.screenshot({ path: artifactPath("console-admin-revoke-dialog.png") });
    await dialog.getByTestId("action-submit").click();
    await dialog.waitFor({ state: "detached", timeout: 15_000 });
    await expect.poll(() => page.getByTestId("admin-devices").locator("tr", { hasText: "Line 4 gateway" }).textContent(), { timeout: 15_000 }).toContain("revoked");
    const after = (await (await page.request.get(`${suite.srv.url}/api/admin/devices`)).json()) as { devices: { id: number; revokedAt: string | null }[] };
    expect(after.devices.find((d) => d.id === dev!.id)?.revokedAt).not.toBeNull();
    const log = (await (await page.request.get(`${suite.srv.url}/api/admin/config-changes?entity=device_credential`)).json()) as { changes: { reason: string | null }[] };
    expect(log.changes.map((c) => c.reason)).toContain("gateway replaced");
    await page.close();
  }, 120_000);

  it("an engineer creates a loop and changes its estimation period with a reason; a viewer is refused", async () => {
    const page = await openSignedIn(suite, "engineer@vantrell.example", DEMO_PASSWORD, "/loops/new");
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

    await page.goto(`${suite.srv.url}/loops/${id}/edit`);
    await page.locator("#f-estimationPeriodS").fill("5");
    await page.locator("#f-reason").fill("poles crowd at z = 1 at 1 s");
    await page.locator("#f-mocReference").fill("MOC-2026-118");
    await page.getByTestId("loop-save").click();
    await page.waitForURL(new RegExp(`/loops/${id}$`), { timeout: 30_000 });
    const cfg = (await (await page.request.get(`${suite.srv.url}/api/admin/loops/${id}`)).json()) as { loop: { estimationPeriodS: number } };
    expect(cfg.loop.estimationPeriodS).toBe(5);
    await page.goto(`${suite.srv.url}/loops/${id}/edit`);
    const log = page.getByTestId("config-log");
    await expect.poll(() => log.textContent(), { timeout: 15_000 }).toContain("MOC-2026-118");
    expect(await log.textContent()).toContain("estimationPeriodS: 1 → 5");
    await page.screenshot({ path: artifactPath("console-loop-edit.png"), fullPage: true });

    // Bad input is a 422 with the field named; nothing changes.
    const bad = await page.request.patch(`${suite.srv.url}/api/loops/${id}`, { data: { estimationPeriodS: -1, reason: "typo test" }, headers: { origin: suite.srv.url } });
    expect(bad.status()).toBe(422);
    expect(((await bad.json()) as { error: string }).error).toMatch(/estimationPeriodS/);

    // The engineer belongs to two tenants: the viewer must be of the tenant the loop was made in.
    const who = (await (await page.request.get(`${suite.srv.url}/api/session`)).json()) as { context: { tenantSlug: string } };
    const viewer = who.context.tenantSlug === "vantrell" ? "viewer@vantrell.example" : "viewer@orrinvale.example";
    await signIn(page, viewer);
    const refused = await page.request.patch(`${suite.srv.url}/api/loops/${id}`, { data: { estimationPeriodS: 2, reason: "viewer tries" }, headers: { origin: suite.srv.url } });
    expect(refused.status()).toBe(403);
    expect((await page.request.get(`${suite.srv.url}/api/loops/${id}`)).status()).toBe(200);
    await page.goto(`${suite.srv.url}/loops/${id}`);
    await page.screenshot({ path: artifactPath("console-loop-new-viewer.png"), fullPage: true });
    await page.getByRole("heading", { name: "FIC-9001" }).waitFor({ timeout: 30_000 });
    expect(await page.getByRole("link", { name: "Edit loop" }).count()).toBe(0);
    await page.close();
  }, 180_000);

  it("role changes, rule deletion and a new area ask for their reason in the page; each reason reaches the change log; a refusal keeps the typed reason", async () => {
    const page = await suite.browser.context.newPage();
    // None of this may fall back on the browser's own prompt.
    const browserPrompts: string[] = [];
    page.on("dialog", (d) => {
      browserPrompts.push(d.message());
      void d.dismiss();
    });
    await signIn(page, "admin@vantrell.example");

    // Role change: operator -> viewer, with the caution that the member can no longer acknowledge.
    await page.goto(`${suite.srv.url}/admin?section=users`);
    const roleSelect = page.getByLabel("Role of operator@vantrell.example");
    await roleSelect.waitFor({ timeout: 15_000 });
    await roleSelect.selectOption("viewer");
    const roleDialog = page.getByRole("dialog", { name: "Change role" });
    await roleDialog.waitFor();
    expect(await roleDialog.textContent()).toContain("operator → viewer");
    expect(await roleDialog.getByTestId("dialog-caution").textContent()).toContain("can no longer acknowledge");
    // The select still shows the current role until the change is made.
    expect(await roleSelect.inputValue()).toBe("operator");
    await roleDialog.getByTestId("action-submit").click();
    await expect.poll(() => roleDialog.getByText("Give a reason (at least 3 characters).").count()).toBe(1);
    await roleDialog.getByTestId("reason-input").fill("moved to the day-shift planning desk");
    await roleDialog.getByTestId("action-submit").click();
    await roleDialog.waitFor({ state: "detached", timeout: 15_000 });
    await expect.poll(() => roleSelect.inputValue(), { timeout: 15_000 }).toBe("viewer");
    const roleLog = await changesOf(page, "membership");
    const logged = roleLog.find((c) => c.reason === "moved to the day-shift planning desk");
    expect(logged?.diff.role).toEqual({ from: "operator", to: "viewer" });

    // A refusal from the server shows in the dialog and the typed reason stays: the membership is
    // removed behind the dialog's back, so the role change answers 404.
    const members = (await (await page.request.get(`${suite.srv.url}/api/admin/users`)).json()) as { members: { membershipId: number; email: string }[] };
    const target = members.members.find((m) => m.email === "operator@vantrell.example")!;
    await roleSelect.selectOption("operator");
    await roleDialog.waitFor();
    await roleDialog.getByTestId("reason-input").fill("back on shift rota");
    const gone = await page.request.delete(`${suite.srv.url}/api/admin/users/${target.membershipId}`, { data: { reason: "left the site" }, headers: { origin: suite.srv.url } });
    expect(gone.status()).toBe(204);
    await roleDialog.getByTestId("action-submit").click();
    await expect.poll(() => roleDialog.getByTestId("dialog-error").count(), { timeout: 15_000 }).toBe(1);
    expect(await roleDialog.getByTestId("dialog-error").textContent()).toMatch(/not found/i);
    expect(await roleDialog.getByTestId("reason-input").inputValue()).toBe("back on shift rota");
    await page.screenshot({ path: artifactPath("console-admin-role-refused.png") });
    await roleDialog.getByRole("button", { name: "Cancel" }).click();
    await roleDialog.waitFor({ state: "detached" });
    expect((await changesOf(page, "membership")).map((c) => c.reason)).toContain("left the site");

    // Notification rule: made with the shared form fields, deleted through the dialog.
    await page.goto(`${suite.srv.url}/admin?section=notifications`);
    const rules = page.getByTestId("admin-rules");
    await rules.getByLabel("Rule name").fill("Night shift escalation");
    await rules.getByLabel("Recipients (e-mail addresses, comma separated)").fill("night.lead@vantrell.example");
    await rules.getByRole("button", { name: "Add rule" }).click();
    // The form's own reason field refuses first, beside the field.
    await expect.poll(() => rules.getByText("Give a change reason.").count()).toBe(1);
    await rules.getByLabel("Change reason").fill("night cover for the new line");
    await rules.getByRole("button", { name: "Add rule" }).click();
    const ruleRow = rules.locator("li", { hasText: "Night shift escalation" });
    await ruleRow.waitFor({ timeout: 15_000 });
    await ruleRow.getByRole("button", { name: "Delete" }).click();
    const ruleDialog = page.getByRole("dialog", { name: "Delete notification rule" });
    await ruleDialog.waitFor();
    expect(await ruleDialog.getByTestId("dialog-caution").textContent()).toContain("no longer be e-mailed");
    await ruleDialog.getByTestId("reason-input").fill("  ");
    await ruleDialog.getByTestId("action-submit").click();
    await expect.poll(() => ruleDialog.getByText("Give a reason (at least 3 characters).").count()).toBe(1);
    await ruleDialog.getByTestId("reason-input").fill("replaced by the area rule");
    await ruleDialog.getByTestId("action-submit").click();
    await ruleDialog.waitFor({ state: "detached", timeout: 15_000 });
    await expect.poll(() => ruleRow.count(), { timeout: 15_000 }).toBe(0);
    const ruleLog = await changesOf(page, "notification_rule");
    expect(ruleLog.find((c) => c.reason === "replaced by the area rule")?.diff.name).toEqual({ from: "Night shift escalation", to: null });

    // New operator area: a name and a reason, both checked in the page.
    await page.goto(`${suite.srv.url}/admin?section=sites`);
    const site = page.getByTestId("admin-sites").locator("li").first();
    await site.getByRole("button", { name: "Add area" }).click();
    const areaDialog = page.getByRole("dialog", { name: "Add operator area" });
    await areaDialog.waitFor();
    expect(await areaDialog.getByTestId("dialog-caution").count()).toBe(0);
    await areaDialog.getByTestId("action-submit").click();
    await expect.poll(() => areaDialog.getByText("Give a name (at least 2 characters).").count()).toBe(1);
    await areaDialog.getByLabel("Area name").fill("Tank farm east");
    await areaDialog.getByTestId("reason-input").fill("new tanks commissioned");
    await areaDialog.getByTestId("action-submit").click();
    await areaDialog.waitFor({ state: "detached", timeout: 15_000 });
    await expect.poll(() => site.textContent(), { timeout: 15_000 }).toContain("Tank farm east");
    expect((await changesOf(page, "area")).map((c) => c.reason)).toContain("new tanks commissioned");

    expect(browserPrompts).toEqual([]);
    await page.close();
  }, 180_000);
});
