"use client";

import { signOut } from "next-auth/react";
import { useState } from "react";

export function UserMenu({ name, email, role }: { name: string; email: string; role: string }) {
  const [busy, setBusy] = useState(false);
  return (
    <div className="flex items-center gap-3 text-sm">
      <span className="text-right leading-tight">
        <span className="block" title={email} data-testid="user-name">
          {name}
        </span>
        <span className="block text-xs text-muted" data-testid="user-role">
          {role}
        </span>
      </span>
      <button
        type="button"
        disabled={busy}
        onClick={() => {
          setBusy(true);
          void signOut({ callbackUrl: "/signin" });
        }}
        className="rounded border border-line px-2 py-1 text-muted hover:text-ink disabled:opacity-60"
      >
        Sign out
      </button>
    </div>
  );
}
