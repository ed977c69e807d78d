"use client";

import { useId, useState } from "react";

interface TenantOption {
  tenantId: number;
  tenantName: string;
  role: string;
}

/**
 * Shows the current tenant; with several memberships, a select that switches the session to
 * another tenant (checked on the server) and reloads, so live connections join the new tenant.
 */
export function TenantSwitcher({
  current,
  memberships,
}: {
  current: { tenantId: number; tenantName: string };
  memberships: TenantOption[];
}) {
  const id = useId();
  const [busy, setBusy] = useState(false);
  const [error, setError] = useState<string | null>(null);

  if (memberships.length < 2) {
    return (
      <span className="text-sm">
        <span className="mr-1.5 text-muted">Tenant</span>
        <span data-testid="tenant-name">{current.tenantName}</span>
      </span>
    );
  }

  async function change(tenantId: number) {
    if (tenantId === current.tenantId) return;
    setBusy(true);
    setError(null);
    try {
      const res = await fetch("/api/session/tenant", {
        method: "POST",
        headers: { "content-type": "application/json" },
        body: JSON.stringify({ tenantId }),
      });
      if (!res.ok) {
        const body = (await res.json().catch(() => null)) as { error?: string } | null;
        throw new Error(body?.error ?? `Switching failed (${res.status}).`);
      }
      // A full load on purpose: every live connection starts over in the new tenant.
      // eslint-disable-next-line @next/next/no-location-assign-relative-destination
      window.location.assign("/");
    } catch (err) {
      setError(err instanceof Error ? err.message : "Switching failed.");
      setBusy(false);
    }
  }

  return (
    <div className="flex items-center gap-2 text-sm">
      <label htmlFor={id} className="text-muted">
        Tenant
      </label>
      <select
        id={id}
        data-testid="tenant-name"
        value={current.tenantId}
        disabled={busy}
        onChange={(e) => void change(Number(e.target.value))}
        className="rounded border border-line bg-ground px-2 py-1 text-ink"
      >
        {memberships.map((m) => (
          <option key={m.tenantId} value={m.tenantId}>
            {m.tenantName} ({m.role})
          </option>
        ))}
      </select>
      {error ? (
        <span role="alert" className="text-urgent">
          {error}
        </span>
      ) : null}
    </div>
  );
}
