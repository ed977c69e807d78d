"use client";
/** The configuration change log (who, when, what from → to, why, MOC reference). */
import useSWR from "swr";
import type { ConfigChangeDto } from "@/lib/data/admin/config-log";
import { fetchJson, query } from "@/lib/client/fetcher";
import { fmtTime } from "@/lib/client/format";
import { TableHead } from "@/app/_components/table-head";

function show(v: unknown): string {
  if (v === null || v === undefined) return "—";
  if (typeof v === "object") return JSON.stringify(v);
  return String(v);
}

export function ConfigChangeLog({ entity, entityId, title = "Change log" }: { entity?: string; entityId?: number; title?: string }) {
  const { data, error } = useSWR(`/api/admin/config-changes${query({ entity, entityId, limit: 100 })}`, (u: string) => fetchJson<{ changes: ConfigChangeDto[] }>(u), { refreshInterval: 15_000 });
  return (
    <section className="rounded-md border border-line bg-surface p-3" aria-label={title} data-testid="config-log">
      <h2 className="mb-2 font-semibold">{title}</h2>
      {error && <p className="text-sm text-urgent">{(error as Error).message}</p>}
      {!data && !error && <p className="text-sm text-muted">Loading…</p>}
      {data && data.changes.length === 0 && <p className="text-sm text-muted">No changes recorded.</p>}
      {data && data.changes.length > 0 && (
        <div className="overflow-x-auto">
          <table className="w-full text-xs">
            <TableHead columns={["when", "who", "what", "change", "reason", "MOC"]} />
            <tbody>
              {data.changes.map((c) => (
                <tr key={c.id} className="border-b border-line/50 align-top">
                  <td className="num py-1 pr-2 font-mono whitespace-nowrap">{fmtTime(c.at)}</td>
                  <td className="py-1 pr-2">{c.userName ?? "system"}</td>
                  <td className="py-1 pr-2">
                    {c.entity} #{c.entityId}
                  </td>
                  <td className="py-1 pr-2 font-mono">
                    {Object.entries(c.diff).map(([k, d]) => (
                      <div key={k}>
                        {k}: {show(d.from)} → {show(d.to)}
                      </div>
                    ))}
                  </td>
                  <td className="py-1 pr-2">{c.reason ?? ""}</td>
                  <td className="py-1">{c.mocReference ?? ""}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
    </section>
  );
}
