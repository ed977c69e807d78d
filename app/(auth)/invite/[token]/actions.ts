"use server";
/** Set a password from a one-time invitation link (no session needed; the token is the proof). */
import { acceptInvitation, acceptSchema } from "@/lib/admin/users";
import { HttpError } from "@/lib/errors";

export interface AcceptState {
  ok: boolean;
  error: string | null;
  email?: string;
}

export async function acceptInvitationAction(token: string, _prev: AcceptState, form: FormData): Promise<AcceptState> {
  const password = String(form.get("password") ?? "");
  const confirm = String(form.get("confirm") ?? "");
  if (password !== confirm) return { ok: false, error: "The two passwords differ." };
  const parsed = acceptSchema.safeParse({ name: String(form.get("name") ?? ""), password });
  if (!parsed.success) return { ok: false, error: parsed.error.issues.map((i) => i.message).join(" ") };
  try {
    const r = await acceptInvitation(token, parsed.data);
    return { ok: true, error: null, email: r.email };
  } catch (e) {
    if (e instanceof HttpError) return { ok: false, error: e.message };
    console.error("[invite] accept failed", e);
    return { ok: false, error: "Could not set the password. Try again or ask for a new invitation." };
  }
}
