"use client";
/**
 * Alarm levels per scope (tenant, site, loop). Tenant and site levels are period-invariant
 * (decay ratio, damping); a loop may add radius levels at its estimation period. Every level is
 * shown with what it means at each loop's period (radius and equivalent time constant). A change
 * needs a reason (and may carry a management-of-change reference); it is logged.
 */
import { useState } from "react";
import useSWR from "swr";
import type { PolicyScope } from "@/lib/domain/alarms/policy";
import type { SiteDto } from "@/lib/data/admin/sites";
import type { Role } from "@/lib/domain/types";
import { roleAtLeast } from "@/lib/domain/types";
import { fetchJson, query } from "@/lib/client/fetcher";
import type { LoopSummary } from "@/lib/domain/types";
import type { PolicyView } from "@/lib/domain/services";
import { PolicyEditor } from "./policy-editor";
import { IdOptions } from "@/app/_components/id-options";

export function AdminPolicies({
  role,
  initialScope = "tenant",
  initialId,
}: {
  role: Role;
  initialScope?: PolicyScope;
  initialId?: number;
}) {
  const [scope, setScope] = useState<PolicyScope>(initialScope);
  const [id, setId] = useState<number | undefined>(initialId);
  const sites = useSWR("/api/admin/sites", (u: string) => fetchJson<{ sites: SiteDto[] }>(u));
  const loops = useSWR("/api/loops", (u: string) => fetchJson<unknown>(u));
  const loopList = (
    Array.isArray(loops.data)
      ? loops.data
      : ((loops.data as { loops?: unknown[] } | undefined)?.loops ?? [])
  ) as LoopSummary[];
  // Angle of each loop's dominant pole now, to show what a decay-ratio level means as a radius.
  const angles = new Map<number, number>();
  for (const l of loopList) {
    const a = l.state?.oscillation?.angle;
    if (a != null) angles.set(l.id, a);
  }
  const key =
    scope === "tenant" || id
      ? `/api/alarm-policies${query({ scope, id: scope === "tenant" ? undefined : id })}`
      : null;
  const view = useSWR(key, (u: string) => fetchJson<PolicyView>(u));
  // The editor remounts when the saved view comes back (its key carries updatedAt), so the
  // confirmation lives here, tied to the scope it was given for.
  const [saved, setSaved] = useState<{ key: string; msg: string } | null>(null);
  const mayEdit = scope === "loop" ? roleAtLeast(role, "engineer") : roleAtLeast(role, "admin");
  const sel = "rounded border border-line bg-ground px-2 py-1 text-sm";
  return (
    <section className="flex flex-col gap-3" aria-label="Alarm levels" data-testid="admin-policies">
      <div className="flex flex-wrap items-end gap-3">
        <label className="flex flex-col text-xs text-muted">
          Scope
          <select
            value={scope}
            onChange={(e) => {
              setScope(e.target.value as PolicyScope);
              setId(undefined);
            }}
            className={sel}
            data-testid="policy-scope"
          >
            <option value="tenant">whole tenant</option>
            <option value="site">one site</option>
            <option value="loop">one loop</option>
          </select>
        </label>
        {scope === "site" && (
          <label className="flex flex-col text-xs text-muted">
            Site
            <select
              value={id ?? ""}
              onChange={(e) => setId(Number(e.target.value) || undefined)}
              className={sel}
            >
              <option value="">choose…</option>
              <IdOptions rows={sites.data?.sites} label="name" />
            </select>
          </label>
        )}
        {scope === "loop" && (
          <label className="flex flex-col text-xs text-muted">
            Loop
            <select
              value={id ?? ""}
              onChange={(e) => setId(Number(e.target.value) || undefined)}
              className={sel}
            >
              <option value="">choose…</option>
              <IdOptions rows={loopList} label="tag" />
            </select>
          </label>
        )}
      </div>
      {view.error && <p className="text-sm text-urgent">{(view.error as Error).message}</p>}
      {view.data && (
        <PolicyEditor
          key={`${view.data.scope}-${view.data.id}-${view.data.updatedAt}`}
          view={view.data}
          mayEdit={mayEdit}
          savedMsg={saved && saved.key === key ? saved.msg : null}
          onSaved={(msg) => {
            if (key) setSaved({ key, msg });
            void view.mutate();
          }}
          angles={angles}
        />
      )}
    </section>
  );
}
