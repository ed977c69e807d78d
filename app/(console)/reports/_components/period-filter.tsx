/** GET form for a report's period and filters (no script needed). Server component. */
import type { SiteDto } from "@/lib/data/admin/sites";
import { IdOptions } from "@/app/_components/id-options";

const KINDS = ["flow", "level", "temperature", "pressure", "composition", "other"];

export function PeriodFilter({ action, from, to, siteId, areaId, kind, sites }: { action: string; from: string; to: string; siteId?: number; areaId?: number; kind?: string; sites: SiteDto[] }) {
  const field = "rounded border border-line bg-ground px-1 py-0.5 text-sm";
  return (
    <form method="get" action={action} className="flex flex-wrap items-end gap-3 text-sm" aria-label="Period and filters">
      <label className="flex flex-col text-muted">
        From (UTC day)
        <input type="date" name="from" defaultValue={from} className={field} />
      </label>
      <label className="flex flex-col text-muted">
        To (UTC day, included; today so far)
        <input type="date" name="to" defaultValue={to} className={field} />
      </label>
      <label className="flex flex-col text-muted">
        Site
        <select name="siteId" defaultValue={siteId ?? ""} className={field}>
          <option value="">all sites</option>
          <IdOptions rows={sites} label="name" />
        </select>
      </label>
      <label className="flex flex-col text-muted">
        Area
        <select name="areaId" defaultValue={areaId ?? ""} className={field}>
          <option value="">all areas</option>
          {sites.flatMap((s) =>
            s.areas.map((a) => (
              <option key={a.id} value={a.id}>
                {s.name} · {a.name}
              </option>
            )),
          )}
        </select>
      </label>
      <label className="flex flex-col text-muted">
        Kind
        <select name="kind" defaultValue={kind ?? ""} className={field}>
          <option value="">all kinds</option>
          {KINDS.map((k) => (
            <option key={k} value={k}>
              {k}
            </option>
          ))}
        </select>
      </label>
      <button type="submit" className="rounded border border-line px-3 py-1">
        Show
      </button>
    </form>
  );
}
