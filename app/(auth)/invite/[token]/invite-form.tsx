"use client";
import Link from "next/link";
import { useActionState } from "react";
import { acceptAsSignedInAction, acceptInvitationAction, type AcceptState } from "./actions";

export function InviteForm({ token, email }: { token: string; email: string }) {
  const [state, action, pending] = useActionState<AcceptState, FormData>(acceptInvitationAction.bind(null, token), { ok: false, error: null });
  if (state.ok)
    return (
      <p role="status">
        Password set for {state.email}.{" "}
        <Link href="/signin" className="text-accent underline">
          Sign in
        </Link>
        .
      </p>
    );
  const inp = "rounded border border-line bg-ground px-2 py-1.5";
  return (
    <form action={action} className="flex flex-col gap-3">
      <p className="text-sm text-muted">
        Account: <span className="text-ink">{email}</span>
      </p>
      <label className="flex flex-col gap-1 text-sm">
        Your name
        <input name="name" required autoComplete="name" className={inp} />
      </label>
      <label className="flex flex-col gap-1 text-sm">
        New password (at least 12 characters)
        <input name="password" type="password" required minLength={12} autoComplete="new-password" className={inp} />
      </label>
      <label className="flex flex-col gap-1 text-sm">
        Repeat the password
        <input name="confirm" type="password" required minLength={12} autoComplete="new-password" className={inp} />
      </label>
      <SubmitRow error={state.error} pending={pending} label="Set password" pendingLabel="Saving…" />
    </form>
  );
}

/** An existing account, signed in as itself: one button adds the membership. */
export function AcceptAsSignedInForm({ token, email }: { token: string; email: string }) {
  const [state, action, pending] = useActionState<AcceptState, FormData>(acceptAsSignedInAction.bind(null, token), { ok: false, error: null });
  if (state.ok)
    return (
      <p role="status">
        Invitation accepted for {state.email}. Switch to the new tenant from the menu on the{" "}
        <Link href="/" className="text-accent underline">
          console
        </Link>
        .
      </p>
    );
  return (
    <form action={action} className="flex flex-col gap-3">
      <p className="text-sm text-muted">
        Signed in as <span className="text-ink">{email}</span>.
      </p>
      <SubmitRow error={state.error} pending={pending} label="Accept invitation" pendingLabel="Accepting…" />
    </form>
  );
}

/** The end of an invitation form: the action's error, then the submit button (worded for the wait). */
function SubmitRow({ error, pending, label, pendingLabel }: { error: string | null; pending: boolean; label: string; pendingLabel: string }) {
  return (
    <>
      {error && (
        <p role="alert" className="text-sm text-urgent">
          {error}
        </p>
      )}
      <button type="submit" disabled={pending} className="rounded bg-accent px-3 py-1.5 font-semibold text-accent-ink disabled:opacity-60">
        {pending ? pendingLabel : label}
      </button>
    </>
  );
}
