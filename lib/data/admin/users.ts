/**
 * Users and roles of a tenant (admin): list members and pending invitations, invite by e-mail
 * (a one-time, expiring link; only the token's SHA-256 is stored), change a role, remove a
 * membership, and accept an invitation: a new address sets its password with the link, an
 * existing account accepts by signing in as itself (its password and identity never change).
 * A role change or removal takes effect at once:
 * the auth layer re-reads memberships and is told through notifyUserChanged.
 */
import "server-only";
import { createHash, randomBytes } from "node:crypto";
import bcrypt from "bcryptjs";
import { z } from "zod";
import { text } from "@/lib/text-input";
import { publicOrigin } from "@/lib/config";
import { membershipSiteScopes } from "@/lib/data/reports";
import { getDb } from "@/lib/data/db/sequelize";
import { ConflictError, ForbiddenError, NotFoundError, ValidationError } from "@/lib/domain/errors";
import { notifyUserChanged, runningService } from "@/lib/data/server-context";
import { ROLES, type Role, type TenantContext } from "@/lib/domain/types";
import { inConfigTransaction, logConfigChange } from "./config-log";

export const INVITATION_TTL_MS = 72 * 3600_000;

export const inviteSchema = z
  .object({
    email: text().trim().toLowerCase().email("Enter a valid e-mail address."),
    role: z.enum(ROLES),
    reason: text().trim().max(500).optional(),
  })
  .strict();
export const roleChangeSchema = z.object({ role: z.enum(ROLES), reason: text().trim().min(3, "Give a reason.").max(500) }).strict();
export const acceptSchema = z
  .object({
    name: text().trim().min(1, "Your name is required.").max(120),
    password: z.string().min(12, "At least 12 characters.").max(200),
  })
  .strict();

export interface MemberDto {
  membershipId: number;
  userId: number;
  email: string;
  name: string;
  role: Role;
  disabled: boolean;
  lastSignInAt: string | null;
  /** The sites this member may see; null = every site of the tenant (membership_sites). */
  siteIds: number[] | null;
}
export interface InvitationDto {
  id: number;
  email: string;
  role: Role;
  expiresAt: string;
  usedAt: string | null;
}

const hashToken = (t: string) => createHash("sha256").update(t, "utf8").digest("hex");

export async function listMembers(ctx: TenantContext): Promise<{ members: MemberDto[]; invitations: InvitationDto[] }> {
  const { Membership, User, Invitation } = getDb().models;
  const rows = await Membership.findAll({ where: { tenantId: ctx.tenantId }, include: [{ model: User, as: "user" }], order: [["id", "ASC"]] });
  const scopes = await membershipSiteScopes(ctx.tenantId);
  const members = rows.map((m) => {
    const u = (m as unknown as { user: InstanceType<typeof User> }).user;
    return {
      membershipId: m.id,
      userId: u.id,
      email: u.email,
      name: u.name,
      role: m.role,
      disabled: Boolean(u.disabled),
      lastSignInAt: u.lastSignInAt ? new Date(u.lastSignInAt).toISOString() : null,
      siteIds: scopes.get(m.id) ?? null,
    };
  });
  const inv = await Invitation.findAll({ where: { tenantId: ctx.tenantId }, order: [["id", "DESC"]], limit: 100 });
  return {
    members,
    invitations: inv.map((i) => ({ id: i.id, email: i.email, role: i.role, expiresAt: new Date(i.expiresAt).toISOString(), usedAt: i.usedAt ? new Date(i.usedAt).toISOString() : null })),
  };
}

/** Create an invitation and send the one-time link. Returns the invitation (never the token). */
export async function inviteUser(ctx: TenantContext, input: z.infer<typeof inviteSchema>, now = Date.now()): Promise<InvitationDto & { mailed: boolean }> {
  const { Invitation, Membership, User } = getDb().models;
  const existing = await User.findOne({ where: { email: input.email } });
  if (existing) {
    const m = await Membership.findOne({ where: { tenantId: ctx.tenantId, userId: existing.id } });
    if (m) throw new ConflictError(`${input.email} is already a member of this tenant.`);
  }
  const token = randomBytes(32).toString("base64url");
  const inv = await inConfigTransaction(async (transaction) => {
    const created = await Invitation.create(
      { tenantId: ctx.tenantId, email: input.email, role: input.role, tokenHash: hashToken(token), invitedBy: ctx.userId, expiresAt: new Date(now + INVITATION_TTL_MS) },
      { transaction },
    );
    await logConfigChange(ctx, { entity: "invitation", entityId: created.id, diff: { email: { from: null, to: input.email }, role: { from: null, to: input.role } }, reason: input.reason ?? null }, transaction);
    return created;
  });
  const link = `${publicOrigin()}/invite/${token}`;
  const mail = runningService("mail");
  let mailed = false;
  if (mail) {
    const hours = INVITATION_TTL_MS / 3600_000;
    await mail.send({
      to: [input.email],
      subject: `Rimguard: you are invited to ${ctx.tenantName}`,
      // The demo outbox lists a tenant's messages by this header (recorded when sent, server/mail).
      headers: { "x-rimguard-tenant": String(ctx.tenantId) },
      // The link is the invitee's alone: the inviting admin's outbox never shows it.
      withhold: [link],
      text: [
        `${ctx.name} invited you to ${ctx.tenantName} on Rimguard as ${input.role}.`,
        ``,
        // One wording for new and existing accounts: the outbox must not tell the inviter which it is.
        `Accept with this one-time link (valid for ${hours} hours). If you already have a Rimguard account, you sign in with it; otherwise you choose a password.`,
        link,
        ``,
        `If you did not expect this, ignore this message.`,
      ].join("\n"),
    });
    mailed = true;
    // The demo's SMTP sink has no real mailbox: the person running the server reads the link here.
    if (mail.sinkPort != null) console.info(`[mail] demo sink: invitation for ${input.email}: ${link}`);
  }
  return { id: inv.id, email: inv.email, role: inv.role, expiresAt: inv.expiresAt.toISOString(), usedAt: null, mailed };
}

export async function changeRole(ctx: TenantContext, membershipId: number, input: z.infer<typeof roleChangeSchema>): Promise<MemberDto> {
  const { Membership, User } = getDb().models;
  const m = await Membership.findOne({ where: { id: membershipId, tenantId: ctx.tenantId }, include: [{ model: User, as: "user" }] });
  if (!m) throw new NotFoundError("Membership");
  if (m.userId === ctx.userId && input.role !== "admin") throw new ValidationError("You cannot lower your own role; ask another admin.");
  const from = m.role;
  if (from !== input.role) {
    await inConfigTransaction(async (transaction) => {
      await m.update({ role: input.role }, { transaction });
      await logConfigChange(ctx, { entity: "membership", entityId: m.id, diff: { role: { from, to: input.role } }, reason: input.reason }, transaction);
    });
    notifyUserChanged(m.userId);
  }
  const u = (m as unknown as { user: InstanceType<typeof User> }).user;
  const siteIds = (await membershipSiteScopes(ctx.tenantId)).get(m.id) ?? null;
  return { membershipId: m.id, userId: u.id, email: u.email, name: u.name, role: m.role, disabled: Boolean(u.disabled), lastSignInAt: u.lastSignInAt ? new Date(u.lastSignInAt).toISOString() : null, siteIds };
}

export async function removeMember(ctx: TenantContext, membershipId: number, reason: string): Promise<void> {
  const { Membership } = getDb().models;
  const m = await Membership.findOne({ where: { id: membershipId, tenantId: ctx.tenantId } });
  if (!m) throw new NotFoundError("Membership");
  if (m.userId === ctx.userId) throw new ValidationError("You cannot remove yourself.");
  await inConfigTransaction(async (transaction) => {
    await m.destroy({ transaction });
    await logConfigChange(ctx, { entity: "membership", entityId: membershipId, diff: { role: { from: m.role, to: null } }, reason }, transaction);
  });
  notifyUserChanged(m.userId);
}

export interface InvitationView {
  email: string;
  tenantName: string;
  role: Role;
  /** An account with this e-mail exists: it accepts by signing in, never by setting a password. */
  existingAccount: boolean;
}

const TOKEN_SHAPE = /^[A-Za-z0-9_-]{20,100}$/;
const INVALID_INVITATION = "Invitation (unknown, used or expired)";

/** What the invitation page shows for a token (null when unknown, used or expired). */
export async function describeInvitation(token: string, now = Date.now()): Promise<InvitationView | null> {
  const { Invitation, Tenant, User } = getDb().models;
  if (!TOKEN_SHAPE.test(token)) return null;
  const inv = await Invitation.findOne({ where: { tokenHash: hashToken(token) } });
  if (!inv || inv.usedAt || inv.expiresAt.getTime() < now) return null;
  const t = await Tenant.findByPk(inv.tenantId);
  const existing = await User.count({ where: { email: inv.email } });
  return { email: inv.email, tenantName: t?.name ?? "", role: inv.role, existingAccount: existing > 0 };
}

/**
 * Use a one-time token to create a NEW account: the user, the membership, the token marked used,
 * in one transaction. An account with the invited e-mail that already exists is never touched
 * (no password, name or session change): its owner accepts by signing in (acceptInvitationAsUser).
 */
export async function acceptInvitation(token: string, input: z.infer<typeof acceptSchema>, now = Date.now()): Promise<{ email: string }> {
  const { Invitation, User, Membership } = getDb().models;
  const { sequelize } = getDb();
  if (!TOKEN_SHAPE.test(token)) throw new NotFoundError(INVALID_INVITATION);
  const passwordHash = await bcrypt.hash(input.password, 12);
  return sequelize.transaction(async (transaction) => {
    const inv = await Invitation.findOne({ where: { tokenHash: hashToken(token) }, transaction, lock: transaction.LOCK.UPDATE });
    if (!inv || inv.usedAt || inv.expiresAt.getTime() < now) throw new NotFoundError(INVALID_INVITATION);
    if (await User.findOne({ where: { email: inv.email }, transaction })) {
      throw new ConflictError(`An account for ${inv.email} already exists. Sign in as ${inv.email} to accept this invitation.`);
    }
    const user = await User.create({ email: inv.email, name: input.name, passwordHash }, { transaction });
    await Membership.create({ tenantId: inv.tenantId, userId: user.id, role: inv.role }, { transaction });
    await inv.update({ usedAt: new Date(now) }, { transaction });
    return { email: inv.email };
  });
}

/**
 * Accept an invitation as the signed-in user (`userId` from the session, never from the form):
 * only when the invitation is addressed to that user's own e-mail. Adds the membership and marks
 * the token used; the account itself is left as it is.
 */
export async function acceptInvitationAsUser(token: string, userId: number, now = Date.now()): Promise<{ email: string; tenantId: number }> {
  const { Invitation, User, Membership } = getDb().models;
  const { sequelize } = getDb();
  if (!TOKEN_SHAPE.test(token)) throw new NotFoundError(INVALID_INVITATION);
  const out = await sequelize.transaction(async (transaction) => {
    const inv = await Invitation.findOne({ where: { tokenHash: hashToken(token) }, transaction, lock: transaction.LOCK.UPDATE });
    if (!inv || inv.usedAt || inv.expiresAt.getTime() < now) throw new NotFoundError(INVALID_INVITATION);
    const user = await User.findByPk(userId, { transaction });
    if (!user || user.disabled) throw new NotFoundError(INVALID_INVITATION);
    if (user.email.toLowerCase() !== inv.email.toLowerCase()) {
      throw new ForbiddenError(`This invitation is for ${inv.email}; you are signed in as ${user.email}. Sign in as ${inv.email} to accept it.`);
    }
    const m = await Membership.findOne({ where: { tenantId: inv.tenantId, userId: user.id }, transaction });
    if (!m) await Membership.create({ tenantId: inv.tenantId, userId: user.id, role: inv.role }, { transaction });
    await inv.update({ usedAt: new Date(now) }, { transaction });
    return { email: inv.email, tenantId: inv.tenantId };
  });
  notifyUserChanged(userId);
  return out;
}
