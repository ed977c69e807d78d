"use server";
/**
 * Accepting an invitation. A new address sets its password (no session needed; the token is the
 * proof). An existing account accepts only while signed in as that account: the user id comes
 * from the session, and the account's password and name are never changed here.
 */
import { headers } from "next/headers";
import { acceptInvitation, acceptInvitationAsUser, acceptSchema } from "@/lib/data/admin/users";
import { getContextOrNull } from "@/lib/auth/guard";
import { isHttpError } from "@/lib/domain/errors";
import { assertSameOrigin } from "@/lib/request-guard";

export interface AcceptState {
  ok: boolean;
  error: string | null;
  email?: string;
}

function failure(e: unknown, fallback: string): AcceptState {
  if (isHttpError(e)) return { ok: false, error: e.message };
  console.error("[invite] accept failed", e);
  return { ok: false, error: fallback };
}

export async function acceptInvitationAction(token: string, _prev: AcceptState, form: FormData): Promise<AcceptState> {
  try {
    assertSameOrigin(await headers());
  } catch (e) {
    return failure(e, "");
  }
  const password = String(form.get("password") ?? "");
  const confirm = String(form.get("confirm") ?? "");
  if (password !== confirm) return { ok: false, error: "The two passwords differ." };
  const parsed = acceptSchema.safeParse({ name: String(form.get("name") ?? ""), password });
  if (!parsed.success) return { ok: false, error: parsed.error.issues.map((i) => i.message).join(" ") };
  try {
    const r = await acceptInvitation(token, parsed.data);
    return { ok: true, error: null, email: r.email };
  } catch (e) {
    return failure(e, "Could not set the password. Try again or ask for a new invitation.");
  }
}

export async function acceptAsSignedInAction(token: string, _prev: AcceptState, _form: FormData): Promise<AcceptState> {
  try {
    assertSameOrigin(await headers());
    const ctx = await getContextOrNull();
    if (!ctx) return { ok: false, error: "Sign in first to accept this invitation." };
    const r = await acceptInvitationAsUser(token, ctx.userId);
    return { ok: true, error: null, email: r.email };
  } catch (e) {
    return failure(e, "Could not accept the invitation. Try again or ask for a new one.");
  }
}
