/** GET form for a report's period and filters (no script needed). Server component. */
import type { ReactNode } from "react";
import type { SiteDto } from "@/lib/data/admin/sites";
import { IdOptions } from "@/app/_components/id-options";

const KINDS = ["flow", "level", "temperature", "pressure", "composition", "other"];
const FIELD_CLASS = "rounded border border-line bg-ground px-1 py-0.5 text-sm";

export function PeriodFilter({ action, from, to, siteId, areaId, kind, sites }: { action: string; from: string; to: string; siteId?: number; areaId?: number; kind?: string; sites: SiteDto[] }) {
  return (
    <form method="get" action={action} className="flex flex-wrap items-end gap-3 text-sm" aria-label="Period and filters">
      <label className="flex flex-col text-muted">
        From (UTC day)
        <input type="date" name="from" defaultValue={from} className={FIELD_CLASS} />
      </label>
      <label className="flex flex-col text-muted">
        To (UTC day, included; today so far)
        <input type="date" name="to" defaultValue={to} className={FIELD_CLASS} />
      </label>
      <FilterSelect label="Site" name="siteId" value={siteId} all="all sites">
        <IdOptions rows={sites} label="name" />
      </FilterSelect>
      <FilterSelect label="Area" name="areaId" value={areaId} all="all areas">
        {sites.flatMap((s) =>
          s.areas.map((a) => (
            <option key={a.id} value={a.id}>
              {s.name} · {a.name}
            </option>
          )),
        )}
      </FilterSelect>
      <FilterSelect label="Kind" name="kind" value={kind} all="all kinds">
        {KINDS.map((k) => (
          <option key={k} value={k}>
            {k}
          </option>
        ))}
      </FilterSelect>
      <button type="submit" className="rounded border border-line px-3 py-1">
        Show
      </button>
    </form>
  );
}

/** A labelled select of the GET form; its empty value (worded `all`) means no filter. */
function FilterSelect({ label, name, value, all, children }: { label: string; name: string; value: string | number | undefined; all: string; children: ReactNode }) {
  return (
    <label className="flex flex-col text-muted">
      {label}
      <select name={name} defaultValue={value ?? ""} className={FIELD_CLASS}>
        <option value="">{all}</option>
        {children}
      </select>
    </label>
  );
}
