"use client";
/**
 * A member's site scope (admin): which sites of the tenant the member sees — every site, or only
 * the ones ticked (e.g. a client's staff invited into a contractor's tenant). Saved with a reason
 * into the change log; the member's open sessions pick it up at once.
 */
import { useState } from "react";
import type { MemberDto } from "@/lib/data/admin/users";
import { sendJson } from "@/lib/client/fetcher";
import { ReasonDialog } from "@/app/_components/reason-dialog";

export function MemberSites({ member, sites, self, onChanged }: { member: MemberDto; sites: { id: number; name: string }[]; self: boolean; onChanged: () => void }) {
  const [editing, setEditing] = useState<Set<number> | null>(null);
  const [confirming, setConfirming] = useState(false);
  const nameOf = (id: number) => sites.find((s) => s.id === id)?.name ?? `site ${id}`;
  const current = member.siteIds;
  const label = current ? current.map(nameOf).join(", ") : "all sites";
  if (!editing) {
    return (
      <span className="flex flex-wrap items-center gap-2">
        <span data-testid={`member-sites-${member.membershipId}`}>{label}</span>
        {!self && sites.length > 0 && (
          <button type="button" className="rounded border border-line px-2 py-0.5 text-xs" onClick={() => setEditing(new Set(current ?? []))} aria-label={`Change the sites of ${member.email}`}>
            Change
          </button>
        )}
      </span>
    );
  }
  const chosen = [...editing].sort((a, b) => a - b);
  const toggle = (id: number) => {
    const next = new Set(editing);
    if (next.has(id)) next.delete(id);
    else next.add(id);
    setEditing(next);
  };
  return (
    <fieldset className="flex flex-col gap-1" aria-label={`Sites ${member.email} may see`}>
      <label className="flex items-center gap-1">
        <input type="checkbox" checked={editing.size === 0} onChange={() => setEditing(new Set())} />
        all sites (no limit)
      </label>
      {sites.map((s) => (
        <label key={s.id} className="flex items-center gap-1">
          <input type="checkbox" checked={editing.has(s.id)} onChange={() => toggle(s.id)} />
          {s.name}
        </label>
      ))}
      <span className="flex gap-2">
        <button type="button" className="rounded border border-line px-2 py-0.5 text-xs" onClick={() => setConfirming(true)}>
          Save
        </button>
        <button type="button" className="text-xs text-muted underline" onClick={() => setEditing(null)}>
          cancel
        </button>
      </span>
      {confirming && (
        <ReasonDialog
          title="Change site access"
          lead={`${member.email}: ${label} → ${chosen.length ? chosen.map(nameOf).join(", ") : "all sites"}`}
          caution={chosen.length ? "The member sees only these sites' loops, alarms, notes and reports, on every page and in e-mail, from the next request on." : undefined}
          submitLabel="Save"
          onConfirm={({ reason }) => sendJson(`/api/admin/users/${member.membershipId}/sites`, "PUT", { siteIds: chosen, reason })}
          onDone={() => {
            setConfirming(false);
            setEditing(null);
            onChanged();
          }}
          onClose={() => setConfirming(false)}
        />
      )}
    </fieldset>
  );
}
