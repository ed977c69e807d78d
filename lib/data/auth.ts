/**
 * The database side of authentication: one small set of queries on users, memberships and
 * tenants. Plain typed rows out; no Sequelize instances cross this boundary.
 */
import { QueryTypes } from "sequelize";
import { getSequelize } from "@/lib/data/db/sequelize";
import type { Role, TenantContext } from "@/lib/domain/types";
import { ROLES } from "@/lib/domain/types";

export interface UserRow {
  id: number;
  email: string;
  name: string;
  passwordHash: string | null;
  disabled: boolean;
  sessionVersion: number;
}

export interface MembershipRow {
  tenantId: number;
  tenantSlug: string;
  tenantName: string;
  role: Role;
}

function toRole(value: unknown): Role {
  const r = String(value);
  if ((ROLES as readonly string[]).includes(r)) return r as Role;
  throw new Error(`Unknown role in the database: ${r}`);
}

interface RawUser {
  id: number | string;
  email: string;
  name: string;
  password_hash: string | null;
  disabled: number | boolean;
  session_version: number | string;
}

function mapUser(r: RawUser): UserRow {
  return {
    id: Number(r.id),
    email: r.email,
    name: r.name,
    passwordHash: r.password_hash,
    disabled: Boolean(Number(r.disabled)),
    sessionVersion: Number(r.session_version),
  };
}

export async function findUserByEmail(email: string): Promise<UserRow | null> {
  const rows = await getSequelize().query<RawUser>(
    "SELECT id, email, name, password_hash, disabled, session_version FROM users WHERE email = ? LIMIT 1",
    { replacements: [email.trim().toLowerCase()], type: QueryTypes.SELECT },
  );
  const row = rows[0];
  return row ? mapUser(row) : null;
}

export async function findUserById(id: number): Promise<UserRow | null> {
  const rows = await getSequelize().query<RawUser>(
    "SELECT id, email, name, password_hash, disabled, session_version FROM users WHERE id = ? LIMIT 1",
    { replacements: [id], type: QueryTypes.SELECT },
  );
  const row = rows[0];
  return row ? mapUser(row) : null;
}

/** Every tenant the user belongs to, by tenant name. */
export async function listMemberships(userId: number): Promise<MembershipRow[]> {
  const rows = await getSequelize().query<{
    tenant_id: number | string;
    slug: string;
    name: string;
    role: string;
  }>(
    `SELECT m.tenant_id, t.slug, t.name, m.role
       FROM memberships m JOIN tenants t ON t.id = m.tenant_id
      WHERE m.user_id = ?
      ORDER BY t.name, t.id`,
    { replacements: [userId], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({
    tenantId: Number(r.tenant_id),
    tenantSlug: r.slug,
    tenantName: r.name,
    role: toRole(r.role),
  }));
}

/**
 * The user's context in one tenant, read fresh from the database: null when the user is gone,
 * disabled, the session version moved on (signed out everywhere, password changed), the session
 * `sid` was signed out (session_revocations, kept across restarts), or the membership does not exist.
 */
export async function loadTenantContext(
  userId: number,
  tenantId: number,
  sessionVersion: number,
  sid?: string,
): Promise<TenantContext | null> {
  const rows = await getSequelize().query<{
    email: string;
    uname: string;
    disabled: number | boolean;
    session_version: number | string;
    slug: string;
    tname: string;
    role: string;
    site_ids: string | null;
  }>(
    `SELECT u.email, u.name AS uname, u.disabled, u.session_version, t.slug, t.name AS tname, m.role,
            (SELECT GROUP_CONCAT(ms.site_id) FROM membership_sites ms WHERE ms.membership_id = m.id) AS site_ids
       FROM users u
       JOIN memberships m ON m.user_id = u.id AND m.tenant_id = ?
       JOIN tenants t ON t.id = m.tenant_id
      WHERE u.id = ?${sid === undefined ? "" : " AND NOT EXISTS (SELECT 1 FROM session_revocations r WHERE r.sid = ?)"}
      LIMIT 1`,
    { replacements: sid === undefined ? [tenantId, userId] : [tenantId, userId, sid], type: QueryTypes.SELECT },
  );
  const r = rows[0];
  if (!r) return null;
  if (Boolean(Number(r.disabled))) return null;
  if (Number(r.session_version) !== sessionVersion) return null;
  return {
    userId,
    email: r.email,
    name: r.uname,
    tenantId,
    tenantSlug: r.slug,
    tenantName: r.tname,
    role: toRole(r.role),
    // Site-scoped membership (membership_sites): only these sites; none listed = every site.
    siteIds: r.site_ids ? r.site_ids.split(",").map(Number) : null,
  };
}

/** Record that one session was signed out, until it would have expired (and drop lapsed rows). */
export async function recordRevokedSession(sid: string, userId: number | null, expiresAtMs: number): Promise<void> {
  const sq = getSequelize();
  await sq.query("DELETE FROM session_revocations WHERE expires_at < UTC_TIMESTAMP(3)");
  await sq.query(
    "INSERT INTO session_revocations (sid, user_id, expires_at, created_at) VALUES (?, ?, ?, UTC_TIMESTAMP(3)) ON DUPLICATE KEY UPDATE expires_at = VALUES(expires_at)",
    { replacements: [sid, userId, new Date(expiresAtMs)] },
  );
}

/** Invalidate every JWT the user holds (sign out everywhere, password change). */
export async function bumpSessionVersion(userId: number): Promise<void> {
  await getSequelize().query("UPDATE users SET session_version = session_version + 1 WHERE id = ?", {
    replacements: [userId],
  });
}

/** Remember when the user last signed in (shown to administrators). */
export async function touchSignIn(userId: number): Promise<void> {
  await getSequelize().query("UPDATE users SET last_sign_in_at = UTC_TIMESTAMP(3) WHERE id = ?", {
    replacements: [userId],
  });
}
