/**
 * Invitations across tenants (issue 9, item 1): an admin of tenant A invites the e-mail of an
 * existing user of tenant B and holds the link. Opening it must not let anyone set that user's
 * password or take the account: the victim keeps the password, the inviter gets no access, and
 * the invitation is accepted only by the user signed in as that e-mail. Tokens are single-use,
 * expire and are stored as SHA-256 only; the demo outbox shows a tenant only the mail it sent,
 * with the one-time link withheld. Real custom server, real MariaDB, the invented auth fixture.
 */
import { createHash } from "node:crypto";
import net from "node:net";
import { QueryTypes } from "sequelize";
import { beforeAll, describe, expect, it } from "vitest";
import { acceptInvitation, acceptInvitationAsUser, describeInvitation, INVITATION_TTL_MS } from "@/lib/data/admin/users";
import { mailOf } from "@/server/mail";
import { setUpServerSuite } from "../helpers/server-suite";
import { FIXTURE_PASSWORD } from "./fixture";
import { authedFetch, sessionOf, signIn, type CookieJar } from "./helpers";

const suite = setUpServerSuite({ seed: false });
let adminA: CookieJar;

beforeAll(async () => {
  adminA = await sessionOf(suite.srv.url, suite.fx.a.users.admin.email);
});

/** Invite as A's admin through the API; returns the one-time token the sink received. */
async function invite(email: string, role = "admin"): Promise<string> {
  const mail = mailOf(suite.srv.server.ctx)!;
  const before = mail.outbox().length;
  const res = await authedFetch(suite.srv.url, adminA, "/api/admin/users", {
    method: "POST",
    headers: { "content-type": "application/json" },
    body: JSON.stringify({ email, role }),
  });
  expect(res.status, await res.clone().text()).toBe(201);
  const [msg] = (await mail.waitForMessages(before + 1)).slice(before);
  const token = /\/invite\/([A-Za-z0-9_-]+)/.exec(msg?.text ?? "")?.[1];
  if (!token) throw new Error("no invitation link in the message");
  return token;
}

async function passwordHashOf(userId: number): Promise<string> {
  const [row] = await suite.srv.db.sequelize.query<{ password_hash: string }>("SELECT password_hash FROM users WHERE id = ?", {
    replacements: [userId],
    type: QueryTypes.SELECT,
  });
  return row!.password_hash;
}

async function membershipsOf(userId: number): Promise<number[]> {
  const rows = await suite.srv.db.sequelize.query<{ tenant_id: number }>("SELECT tenant_id FROM memberships WHERE user_id = ? ORDER BY tenant_id", {
    replacements: [userId],
    type: QueryTypes.SELECT,
  });
  return rows.map((r) => Number(r.tenant_id));
}

describe("an invitation to an existing account of another tenant", () => {
  it("cannot set the victim's password: the victim keeps it and the inviter gets no access", async () => {
    const victim = suite.fx.b.users.operator;
    const hashBefore = await passwordHashOf(victim.id);
    const token = await invite(victim.email);

    // The inviter holds the link and opens it signed out: no password form, only "sign in as".
    const page = await fetch(`${suite.srv.url}/invite/${token}`);
    expect(page.status).toBe(200);
    const html = await page.text();
    expect(html).toContain("Sign in as");
    expect(html).not.toContain('name="password"');

    // The accept step itself refuses to touch an existing account (409) ...
    await expect(acceptInvitation(token, { name: "Mallory", password: "attacker-chosen-password" })).rejects.toMatchObject({ status: 409 });
    // ... so the victim's password is unchanged and still works; the inviter's does not.
    expect(await passwordHashOf(victim.id)).toBe(hashBefore);
    expect((await signIn(suite.srv.url, victim.email, FIXTURE_PASSWORD)).session).toBeTruthy();
    expect((await signIn(suite.srv.url, victim.email, "attacker-chosen-password")).session).toBeNull();
    // No membership in A was added, and the token is still unused (its owner may still accept).
    expect(await membershipsOf(victim.id)).toEqual([suite.fx.b.id]);
    expect(await describeInvitation(token)).toMatchObject({ email: victim.email, existingAccount: true });

    // Another signed-in user cannot accept it for the victim.
    await expect(acceptInvitationAsUser(token, suite.fx.a.users.viewer.id)).rejects.toMatchObject({ status: 403 });
    expect(await membershipsOf(suite.fx.a.users.viewer.id)).toEqual([suite.fx.a.id]);
  });

  it("the invited user accepts by signing in as that account; the token works once", async () => {
    const invitee = suite.fx.b.users.engineer;
    const hashBefore = await passwordHashOf(invitee.id);
    const token = await invite(invitee.email, "viewer");
    const jar = (await signIn(suite.srv.url, invitee.email, FIXTURE_PASSWORD)).jar;
    const page = await authedFetch(suite.srv.url, jar, `/invite/${token}`);
    expect(await page.text()).toContain("Accept invitation");

    await acceptInvitationAsUser(token, invitee.id);
    expect(await membershipsOf(invitee.id)).toEqual([suite.fx.a.id, suite.fx.b.id].sort((x, y) => x - y));
    expect(await passwordHashOf(invitee.id)).toBe(hashBefore);
    await expect(acceptInvitationAsUser(token, invitee.id)).rejects.toMatchObject({ status: 404 });
    expect(await describeInvitation(token)).toBeNull();
  });
});

describe("invitation tokens", () => {
  it("are stored as SHA-256 only, and a new address sets its password once", async () => {
    const token = await invite("fresh.hand@brackwater.example", "operator");
    const rows = await suite.srv.db.sequelize.query<{ token_hash: string }>("SELECT token_hash FROM invitations WHERE email = ?", {
      replacements: ["fresh.hand@brackwater.example"],
      type: QueryTypes.SELECT,
    });
    expect(rows.map((r) => r.token_hash)).toEqual([createHash("sha256").update(token, "utf8").digest("hex")]);
    expect(JSON.stringify(rows)).not.toContain(token);

    await acceptInvitation(token, { name: "Fresh Hand", password: "a long enough password" });
    expect((await signIn(suite.srv.url, "fresh.hand@brackwater.example", "a long enough password")).session).toBeTruthy();
    await expect(acceptInvitation(token, { name: "Again", password: "another long password" })).rejects.toMatchObject({ status: 404 });
  });

  it("expire", async () => {
    const token = await invite("late.comer@brackwater.example", "viewer");
    const later = Date.now() + INVITATION_TTL_MS + 60_000;
    expect(await describeInvitation(token, later)).toBeNull();
    await expect(acceptInvitation(token, { name: "Late", password: "a long enough password" }, later)).rejects.toMatchObject({ status: 404 });
    const users = await suite.srv.db.models.User.count({ where: { email: "late.comer@brackwater.example" } });
    expect(users).toBe(0);
  });
});

/** One raw SMTP message straight to the sink, as any local program could send it. */
function rawSmtp(port: number, lines: string[]): Promise<void> {
  return new Promise((resolve, reject) => {
    const sock = net.connect(port, "127.0.0.1");
    const script = ["EHLO forger.example", "MAIL FROM:<x@forger.example>", "RCPT TO:<ops@quillon.example>", "DATA", [...lines, "."].join("\r\n"), "QUIT"];
    let step = 0;
    sock.setEncoding("utf8");
    sock.on("data", (d: string) => {
      // Answer only on the last line of a reply ("250 ", not "250-").
      if (/^(220|250|354) /m.test(d) && step < script.length) sock.write(script[step++] + "\r\n");
      if (/^221/m.test(d)) sock.end();
    });
    sock.on("close", () => resolve());
    sock.on("error", reject);
  });
}

describe("the demo outbox", () => {
  it("shows an admin only the mail their tenant sent, with the one-time link withheld", async () => {
    const token = await invite("outbox.check@quillon.example", "viewer");
    const mail = mailOf(suite.srv.server.ctx)!;
    // A message that claims to be tenant B's but did not come from this process.
    await rawSmtp(mail.sinkPort!, ["Subject: forged for B", `X-Rimguard-Tenant: ${suite.fx.b.id}`, "", "forged body"]);

    const a = (await (await authedFetch(suite.srv.url, adminA, "/api/outbox")).json()) as { messages: { to: string[]; subject: string; text: string }[] };
    const mine = a.messages.find((m) => m.to.includes("outbox.check@quillon.example"));
    expect(mine?.text).toContain("link withheld");
    expect(JSON.stringify(a.messages)).not.toContain(token);

    const adminB = (await signIn(suite.srv.url, suite.fx.b.users.admin.email, FIXTURE_PASSWORD)).jar;
    const b = (await (await authedFetch(suite.srv.url, adminB, "/api/outbox")).json()) as { messages: { subject: string; to: string[] }[] };
    expect(b.messages.map((m) => m.subject)).not.toContain("forged for B");
    expect(b.messages.some((m) => m.to.includes("outbox.check@quillon.example"))).toBe(false);
    expect(mail.outbox().some((m) => m.subject === "forged for B")).toBe(true);
  });
});
