"use client";
/**
 * Shift times per site (admin): the local start of each shift in the site's IANA time zone, which
 * the handover, its e-mail and the read confirmations follow. Checked as typed (the same rules
 * the server applies, lib/reports/shifts.ts) and saved with a reason into the change log.
 */
import { useState } from "react";
import useSWR from "swr";
import type { SiteShiftsDto } from "@/lib/admin/site-shifts";
import type { SiteDto } from "@/lib/data/admin/sites";
import { fetchJson, sendJson } from "@/lib/client/fetcher";
import { shiftStartProblems } from "@/lib/reports/shifts";
import { INPUT_CLASS } from "@/app/_components/form-field";
import { ReasonDialog } from "@/app/_components/reason-dialog";

const toMin = (t: string) => Number(t.slice(0, 2)) * 60 + Number(t.slice(3, 5));
const hours = (min: number) => `${Math.floor(min / 60)} h${min % 60 ? ` ${min % 60} min` : ""}`;

function zoneProblem(tz: string): string | null {
  try {
    new Intl.DateTimeFormat("en", { timeZone: tz.trim() });
    return tz.trim() ? null : "Use an IANA time zone such as Europe/Berlin.";
  } catch {
    return "Use an IANA time zone such as Europe/Berlin.";
  }
}

export function AdminShifts() {
  // The same key as the sites list above: a site added there appears here at once.
  const { data } = useSWR("/api/admin/sites", (u: string) => fetchJson<{ sites: SiteDto[] }>(u));
  const sites = data?.sites ?? [];
  return (
    <section className="flex flex-col gap-2" aria-label="Shift times" data-testid="admin-shifts">
      <h2 className="font-semibold">Shift times</h2>
      <p className="text-sm text-muted">
        Local start of every shift, in the site&apos;s time zone. On a daylight-saving day a shift keeps its local start and end, so it runs an hour shorter or longer.
      </p>
      {sites.map((s) => (
        <SiteShiftEditor key={s.id} siteId={s.id} />
      ))}
    </section>
  );
}

function SiteShiftEditor({ siteId }: { siteId: number }) {
  const { data, error, mutate } = useSWR(`/api/admin/sites/${siteId}/shifts`, (u: string) => fetchJson<{ site: SiteShiftsDto }>(u));
  const [draft, setDraft] = useState<{ timeZone: string; starts: string[] } | null>(null);
  const [confirming, setConfirming] = useState(false);
  const [saved, setSaved] = useState<string | null>(null);
  if (error) return <p className="text-sm text-urgent">{(error as Error).message}</p>;
  if (!data) return null;
  const site = data.site;
  const cur = draft ?? { timeZone: site.timeZone, starts: site.shiftStarts };
  const problems = shiftStartProblems(cur.starts);
  const tzProblem = zoneProblem(cur.timeZone);
  const changed = cur.timeZone !== site.timeZone || cur.starts.join(",") !== site.shiftStarts.join(",");
  const set = (next: Partial<{ timeZone: string; starts: string[] }>) => {
    setSaved(null);
    setDraft({ ...cur, ...next });
  };
  const preview = problems.length
    ? null
    : cur.starts.map((t, i) => {
        const end = cur.starts[(i + 1) % cur.starts.length]!;
        const len = cur.starts.length === 1 ? 1440 : (toMin(end) - toMin(t) + 1440) % 1440;
        return `${t}–${end} (${hours(len)})`;
      });
  return (
    <div className="flex flex-col gap-2 rounded border border-line bg-surface px-3 py-2 text-sm" data-testid={`shifts-${siteId}`}>
      <div className="flex flex-wrap items-end gap-3">
        <strong className="self-center">{site.siteName}</strong>
        <label className="flex flex-col text-muted">
          Time zone (IANA)
          <input value={cur.timeZone} onChange={(e) => set({ timeZone: e.target.value })} className={INPUT_CLASS} aria-invalid={!!tzProblem} aria-label={`Time zone of ${site.siteName}`} />
        </label>
        {cur.starts.map((t, i) => (
          <label key={i} className="flex flex-col text-muted">
            Shift {i + 1} starts
            <span className="flex gap-1">
              <input
                type="time"
                value={t}
                onChange={(e) => set({ starts: cur.starts.map((x, j) => (j === i ? e.target.value : x)) })}
                className={INPUT_CLASS}
                aria-invalid={problems.some((p) => p.index === i)}
                aria-label={`Start of shift ${i + 1} at ${site.siteName}`}
              />
              {cur.starts.length > 1 && (
                <button type="button" className="rounded border border-line px-1 text-xs" onClick={() => set({ starts: cur.starts.filter((_, j) => j !== i) })} aria-label={`Remove shift ${i + 1}`}>
                  ×
                </button>
              )}
            </span>
          </label>
        ))}
        {cur.starts.length < 6 && (
          <button type="button" className="rounded border border-line px-2 py-0.5 text-xs" onClick={() => set({ starts: [...cur.starts, "00:00"] })}>
            Add shift
          </button>
        )}
        <button type="button" disabled={!changed || problems.length > 0 || !!tzProblem} onClick={() => setConfirming(true)} className="rounded border border-line px-3 py-1 disabled:opacity-50">
          Save shifts
        </button>
        {changed && (
          <button type="button" className="text-xs text-muted underline" onClick={() => setDraft(null)}>
            undo changes
          </button>
        )}
      </div>
      {preview && <p className="num text-muted">Shifts: {preview.join(" · ")}</p>}
      {(tzProblem || problems.length > 0) && (
        <ul role="alert" className="text-urgent">
          {tzProblem && <li>{tzProblem}</li>}
          {problems.map((p) => (
            <li key={`${p.index}-${p.message}`}>{p.message}</li>
          ))}
        </ul>
      )}
      {saved && <p role="status">{saved}</p>}
      {confirming && (
        <ReasonDialog
          title="Change shift times"
          lead={`${site.siteName}: ${site.shiftStarts.join(", ")} (${site.timeZone}) → ${cur.starts.join(", ")} (${cur.timeZone.trim()})`}
          caution="From now on the handover, its e-mail and the read confirmations follow the new times, also when an earlier shift is looked up."
          submitLabel="Save shifts"
          onConfirm={({ reason }) => sendJson(`/api/admin/sites/${siteId}/shifts`, "PUT", { timeZone: cur.timeZone.trim(), shiftStarts: cur.starts, reason })}
          onDone={() => {
            setConfirming(false);
            setDraft(null);
            setSaved("Saved and logged.");
            void mutate();
          }}
          onClose={() => setConfirming(false)}
        />
      )}
    </div>
  );
}
