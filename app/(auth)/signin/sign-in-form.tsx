"use client";

import { signIn } from "next-auth/react";
import { useState, type FormEvent } from "react";

/** next-auth's generic code for a rejected password; our words replace it. */
function describe(error: string | null): string | null {
  if (!error) return null;
  switch (error) {
    case "CredentialsSignin":
      return "The e-mail or password is not right.";
    case "SessionRequired":
      return "Your session has ended. Sign in to continue.";
    case "Configuration":
    case "Callback":
      return "Sign-in is not available right now. Try again, or ask an administrator.";
    default:
      return error;
  }
}

export function SignInForm({ callbackUrl, initialError }: { callbackUrl: string; initialError: string | null }) {
  const [error, setError] = useState<string | null>(describe(initialError));
  const [busy, setBusy] = useState(false);

  async function onSubmit(e: FormEvent<HTMLFormElement>) {
    e.preventDefault();
    const form = new FormData(e.currentTarget);
    setBusy(true);
    setError(null);
    try {
      const res = await signIn("credentials", {
        email: String(form.get("email") ?? ""),
        password: String(form.get("password") ?? ""),
        redirect: false,
        callbackUrl,
      });
      if (!res || res.error || !res.ok) {
        setError(describe(res?.error ?? "CredentialsSignin"));
        setBusy(false);
        return;
      }
      window.location.assign(callbackUrl);
    } catch {
      setError("The server could not be reached. Check the connection and try again.");
      setBusy(false);
    }
  }

  return (
    <form onSubmit={onSubmit} noValidate className="space-y-4" aria-describedby={error ? "signin-error" : undefined}>
      <div className="space-y-1">
        <label htmlFor="email" className="block text-sm font-medium">
          E-mail
        </label>
        <input
          id="email"
          name="email"
          type="email"
          autoComplete="username"
          required
          className="w-full rounded border border-line bg-ground px-3 py-2 text-ink placeholder:text-muted focus:border-accent"
        />
      </div>
      <div className="space-y-1">
        <label htmlFor="password" className="block text-sm font-medium">
          Password
        </label>
        <input
          id="password"
          name="password"
          type="password"
          autoComplete="current-password"
          required
          className="w-full rounded border border-line bg-ground px-3 py-2 text-ink focus:border-accent"
        />
      </div>
      {error ? (
        <p id="signin-error" role="alert" className="rounded border border-urgent/60 bg-ground px-3 py-2 text-sm text-urgent">
          {error}
        </p>
      ) : null}
      <button
        type="submit"
        disabled={busy}
        className="w-full rounded bg-accent px-3 py-2 font-medium text-accent-ink hover:opacity-90 disabled:opacity-60"
      >
        {busy ? "Signing in…" : "Sign in"}
      </button>
    </form>
  );
}
